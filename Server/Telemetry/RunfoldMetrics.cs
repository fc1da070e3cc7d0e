using System.Diagnostics;
using System.Diagnostics.Metrics;

namespace Runfold.Server.Telemetry;

/// <summary>
/// Runfold's own traces and metrics (OpenTelemetry names, exported by <see cref="TelemetryServiceCollectionExtensions"/>).
/// The instruments are static so any capability records with one line, without a constructor change:
/// <c>RunfoldMetrics.RunsClaimed(ids.Count)</c>. On /metrics they read as, for example,
/// <c>runfold_runs_claimed_total</c> and <c>runfold_analysis_refit_duration_seconds</c>.
/// </summary>
public static class RunfoldMetrics
{
    public const string SourceName = "Runfold";

    /// <summary>Spans of Runfold's own work (a refit, a demo agent's run), beside ASP.NET Core's request spans.</summary>
    public static ActivitySource Activities { get; } = new(SourceName);

    private static readonly Meter Meter = new(SourceName);

    private static readonly Counter<long> Claimed = Meter.CreateCounter<long>(
        "runfold.runs.claimed", "{run}", "Runs handed to a caller by a claim or an assignment.");

    private static readonly Counter<long> Heartbeats = Meter.CreateCounter<long>(
        "runfold.runs.heartbeats", "{heartbeat}", "Heartbeats received, by outcome (extended or refused).");

    private static readonly Counter<long> Lapsed = Meter.CreateCounter<long>(
        "runfold.leases.lapsed", "{run}", "Claims whose lease ran out, returning the run to the open pool.");

    private static readonly Counter<long> Uploaded = Meter.CreateCounter<long>(
        "runfold.results.uploaded", "{revision}", "Result revisions stored, by state (done, failed) and channel (api, ui, bulk).");

    private static readonly Histogram<double> Refit = Meter.CreateHistogram<double>(
        "runfold.analysis.refit.duration", "s", "Time to refit a study's surrogates, sensitivity and candidates into a snapshot.");

    private static readonly Histogram<double> Lag = Meter.CreateHistogram<double>(
        "runfold.analysis.snapshot.lag", "s", "Time from the result commit a snapshot is based on to the snapshot being stored.");

    public static void RunsClaimed(int count)
    {
        if (count > 0) Claimed.Add(count);
    }

    public static void Heartbeat(bool extended) => Heartbeats.Add(1, new KeyValuePair<string, object?>("outcome", extended ? "extended" : "refused"));

    public static void LeasesLapsed(int count)
    {
        if (count > 0) Lapsed.Add(count);
    }

    /// <param name="state">"done" or "failed".</param>
    /// <param name="channel">"api", "ui" or "bulk".</param>
    public static void ResultsUploaded(string state, string channel, int count = 1)
    {
        if (count > 0) Uploaded.Add(count, new KeyValuePair<string, object?>("state", state), new KeyValuePair<string, object?>("channel", channel));
    }

    public static void RefitDuration(TimeSpan duration) => Refit.Record(duration.TotalSeconds);

    public static void SnapshotLag(TimeSpan lag) => Lag.Record(Math.Max(0, lag.TotalSeconds));
}
