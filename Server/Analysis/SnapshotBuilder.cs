using System.Globalization;
using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;
using Runfold.Server.Runs;
using Runfold.Server.Studies;
using Runfold.Shared.Modeling;
using Runfold.Shared.Modeling.Selection;
using Runfold.Shared.Studies;

namespace Runfold.Server.Analysis;

/// <summary>A stored snapshot and the model choices behind it.</summary>
public sealed record StoredSnapshot(AnalysisSnapshotDto Snapshot, ModelChoices Choices, IReadOnlyDictionary<string, FittedSurrogate> Models);

/// <summary>
/// Builds a snapshot in explicit stages, each reported as progress: "reading runs", "fitting &lt;response&gt;" per
/// response (or "comparing every model for &lt;response&gt;" in a background comparison), then every registered
/// <see cref="IAnalysisStage"/> ("sensitivity", "candidates"), then "storing". The coordinator decides per response
/// whether the kept choice is refitted or every model is compared again.
/// </summary>
public sealed partial class SnapshotBuilder(
    IDbContextFactory<RunfoldDbContext> contexts,
    FactorSpaces spaces,
    TimeProvider time,
    IEnumerable<IAnalysisStage> stages,
    AnalysisOptions options,
    ILogger<SnapshotBuilder> logger)
{
    public const string Reading = "reading runs";
    public const string Fitting = "fitting";
    public const string Comparing = "comparing every model for";
    public const string Storing = "storing";

    private readonly IReadOnlyList<IAnalysisStage> _stages = [.. stages];

    public async Task<AnalysisInput?> ReadAsync(int studyId, RefitProgress progress, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(progress);
        progress.Report(Reading, 0);
        await using var db = await contexts.CreateDbContextAsync(cancellationToken);
        var input = await AnalysisReads.ReadAsync(db, spaces, studyId, cancellationToken);
        if (input is not null) progress.ResultSetVersion = input.ResultSetVersion;
        return input;
    }

    /// <summary>Fits every response (progress 5 % to where the later stages begin), then runs the later stages.
    /// <paramref name="choices"/> null compares every model for every response.</summary>
    public async Task<AnalysisWork> FitAsync(AnalysisInput input, ModelChoices? choices, RefitProgress progress, string stage,
        CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(input);
        ArgumentNullException.ThrowIfNull(progress);
        var responses = input.Responses.Count;
        var stageWeight = _stages.Sum(s => Math.Max(s.Weight, 0));
        var fittedUpTo = 5 + 90 * responses / Math.Max(responses + stageWeight, 1e-9);
        var models = new List<ResponseModel>(responses);
        var clock = System.Diagnostics.Stopwatch.StartNew();
        for (var i = 0; i < responses; i++)
        {
            var response = input.Responses[i];
            var part = progress.Part($"{stage} {response.Name}", 5 + (fittedUpTo - 5) * i / responses, 5 + (fittedUpTo - 5) * (i + 1) / responses);
            part.Report(0);
            models.Add(FitResponse(input, response, choices?.Of(response.Name), choices is null, part, cancellationToken));
        }
        var work = new AnalysisWork(input, models);
        work.Timings.Add(("fits", clock.Elapsed));
        var at = fittedUpTo;
        foreach (var later in _stages)
        {
            var share = stageWeight > 0 ? (95 - fittedUpTo) * Math.Max(later.Weight, 0) / stageWeight : 0;
            var part = progress.Part(later.Name, at, at + share);
            part.Report(0);
            clock.Restart();
            await later.RunAsync(work, part, cancellationToken);
            work.Timings.Add((later.Name, clock.Elapsed));
            at += share;
        }
        return work;
    }

    /// <summary>One response: the kept choice refitted with its hyper-parameters, or — with no choice, or when the
    /// choice no longer applies — every model compared (<see cref="SurrogateSelection"/>).</summary>
    public ResponseModel FitResponse(AnalysisInput input, ResponseSpec response, ModelChoice? kept, bool compareAll, IProgress<double> progress,
        CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(input);
        ArgumentNullException.ThrowIfNull(response);
        ArgumentNullException.ThrowIfNull(progress);
        var data = input.DataOf(response.Name);
        var n = data.Count;
        if (data.Coded is null)
        {
            var needed = SurrogateSelection.MinimumRuns(input.Space);
            return new ResponseModel(response, data, null, null, true,
                $"No done run has a value of {response.Name} yet; a surrogate of these factors needs at least {needed}.", needed);
        }
        if (kept is not null && !compareAll)
        {
            var reason = string.Create(CultureInfo.InvariantCulture,
                $"{kept.Reason} Refitted to these {n} runs with its hyper-parameters kept; every model was last compared at {kept.ComparedAtRuns} runs.");
            var refit = SurrogateRefit.Refit(input.Space, data.Coded, data.Observed, kept.Recipe, RefitMode.Update, reason, cancellation: cancellationToken);
            if (refit.Surrogate is { } surrogate)
            {
                progress.Report(1);
                return new ResponseModel(response, data, surrogate,
                    kept with { Recipe = SurrogateRefit.RecipeOf(surrogate), Description = surrogate.Description, CvRmse = surrogate.Check.CvRmse }, false);
            }
            Log.ChoiceNoLongerApplies(logger, input.StudyId, response.Name, refit.NotApplicable);
        }
        var selection = SurrogateSelection.Fit(input.Space, data.Coded, data.Observed, options.Selection with { Noisy = response.Noisy },
            new Reporter(p => progress.Report(p.Fraction)), cancellationToken);
        if (selection.Surrogate is { } chosen)
        {
            var compared = chosen.Compared.Select(c => new ModelScoreDto(c.Kind, c.Description, c.CvRmse, c.CvR2)).ToList();
            return new ResponseModel(response, data, chosen,
                new ModelChoice(SurrogateRefit.RecipeOf(chosen), chosen.Description, chosen.Reason, compared, n, chosen.Check.CvRmse), true);
        }
        var refusal = selection.Refusal!;
        return new ResponseModel(response, data, null, null, true, refusal.Reason, refusal.RunsStillNeeded);
    }

    /// <summary>A refit that failed for a reason other than the database: stored as a snapshot that says so, so the
    /// pages show it and the same runs are not refitted again and again.</summary>
    public static AnalysisWork Failed(AnalysisInput input, Exception exception)
    {
        ArgumentNullException.ThrowIfNull(input);
        ArgumentNullException.ThrowIfNull(exception);
        var sentence = $"The analysis of these runs failed ({exception.Message}); it runs again with the next result.";
        return new AnalysisWork(input, [.. input.Responses.Select(r => new ResponseModel(r, input.DataOf(r.Name), null, null, true, sentence))]);
    }

    /// <summary>Stores the snapshot as the next version of the study, with an audit event where a response's model
    /// changed. Null when a snapshot of newer results is already stored (this refit is stale) or another instance
    /// stored the same version first.</summary>
    public async Task<StoredSnapshot?> StoreAsync(AnalysisWork work, ModelChoices previous, RefitProgress progress, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(work);
        ArgumentNullException.ThrowIfNull(previous);
        ArgumentNullException.ThrowIfNull(progress);
        progress.Report(Storing, 95);
        var input = work.Input;
        await using var db = await contexts.CreateDbContextAsync(cancellationToken);
        var latest = await db.AnalysisSnapshots.Where(s => s.StudyId == input.StudyId).OrderByDescending(s => s.Version)
            .Select(s => new { s.Version, s.ResultSetVersion }).FirstOrDefaultAsync(cancellationToken);
        if (latest is not null && latest.ResultSetVersion > input.ResultSetVersion) return null;

        var version = (latest?.Version ?? 0) + 1;
        var now = time.GetUtcNow();
        var snapshot = ToDto(work, version, now);
        var fitted = work.Models.Where(m => m.Surrogate is not null && m.Choice is not null).ToList();
        var models = fitted.Count == 0 ? null : new StoredModels(
            [.. input.Runs.Select(r => new RunRevision(r.RunId, r.Revision))],
            fitted.ToDictionary(m => m.Response.Name, m => new StoredModel(m.Choice!.Recipe, m.Choice.Reason, m.Choice.ComparedAtRuns, m.ComparedNow)));
        var summary = new AnalysisHistoryPointDto(version, snapshot.BasedOnRuns, now, work.BestDesirability,
            fitted.Where(m => double.IsFinite(m.Surrogate!.Check.Nrmse)).ToDictionary(m => m.Response.Name, m => m.Surrogate!.Check.Nrmse));
        db.AnalysisSnapshots.Add(new AnalysisSnapshot
        {
            StudyId = input.StudyId,
            Version = version,
            ResultSetVersion = input.ResultSetVersion,
            BasedOnRuns = snapshot.BasedOnRuns,
            ComputedAt = now,
            PayloadJson = JsonSerializer.Serialize(snapshot, RunfoldJson.Options),
            ModelsJson = models?.ToJson(),
            SummaryJson = JsonSerializer.Serialize(summary, RunfoldJson.Options),
        });
        foreach (var model in fitted)
        {
            var before = previous.Of(model.Response.Name);
            if (before is not null && before.Recipe.Kind == model.Choice!.Recipe.Kind && before.Recipe.LogResponse == model.Choice.Recipe.LogResponse) continue;
            db.AuditEvents.Add(Audit.Event(null, input.StudyId, null, "analysis.model", ModelChange(model, before), now));
        }
        try
        {
            // One statement batch in one transaction: the snapshot and its audit events, or nothing.
            await db.SaveChangesAsync(CancellationToken.None);
        }
        catch (DbUpdateException e)
        {
            Log.VersionTaken(logger, input.StudyId, version, e);
            return null;
        }
        var choices = new ModelChoices(fitted.ToDictionary(m => m.Response.Name, m => m.Choice!), previous.LastComparison);
        return new StoredSnapshot(snapshot, choices, fitted.ToDictionary(m => m.Response.Name, m => m.Surrogate!));
    }

    public static AnalysisSnapshotDto ToDto(AnalysisWork work, int version, DateTimeOffset computedAt)
    {
        ArgumentNullException.ThrowIfNull(work);
        var input = work.Input;
        var responses = work.Models.Select(m => new ResponseAnalysisDto(
            m.Response.Name,
            m.Response.Unit,
            m.Surrogate is { } s && m.Choice is { } choice
                ? new ModelSummaryDto(s.Kind, s.Description, s.Check.CvR2, s.Check.CvRmse, s.Check.Nrmse, s.Check.MaxAbsError, s.Reason,
                    s.LogResponse, choice.Compared, choice.ComparedAtRuns)
                : null,
            m.Surrogate is { } fitted
                ? new FitCheckDto(m.Data.RunNumbers, fitted.Check.Observed, fitted.Check.Predicted, fitted.Check.Residuals, fitted.Check.Method)
                : null,
            work.Sensitivity.GetValueOrDefault(m.Response.Name) ?? [],
            work.MainEffects.GetValueOrDefault(m.Response.Name) ?? [],
            m.Surrogate is null ? m.Refusal : null)).ToList();
        var stillNeeded = work.Models.Where(m => m.Surrogate is null).Select(m => m.RunsStillNeeded).Max();
        return new AnalysisSnapshotDto(version, input.ResultSetVersion, input.Runs.Count, input.TotalRuns, input.FailedRuns, computedAt,
            responses, [.. work.Candidates], Notice(work), stillNeeded, work.CandidateNotes.Count == 0 ? null : [.. work.CandidateNotes]);
    }

    /// <summary>The sentence above the snapshot when some response has no model yet.</summary>
    private static string? Notice(AnalysisWork work)
    {
        var missing = work.Models.Where(m => m.Surrogate is null).ToList();
        if (missing.Count == 0) return null;
        var failed = work.Input.FailedRuns;
        var failedNote = failed == 0 ? "" : failed == 1 ? " The failed run is not counted." : $" The {failed} failed runs are not counted.";
        if (missing.Count == work.Models.Count)
            return missing.Select(m => m.Refusal).Distinct().Count() == 1
                ? missing[0].Refusal + failedNote
                : "No response has a surrogate yet: " + string.Join(" ", missing.Select(m => $"{m.Response.Name}: {m.Refusal}")) + failedNote;
        return "Some responses have no surrogate yet: " + string.Join(" ", missing.Select(m => $"{m.Response.Name}: {m.Refusal}")) + failedNote;
    }

    private static string ModelChange(ResponseModel model, ModelChoice? before)
    {
        var s = model.Surrogate!;
        var scores = string.Create(CultureInfo.InvariantCulture, $"cross-validated R² {s.Check.CvR2:0.###}, {model.Data.Count} runs");
        return before is null
            ? $"The first surrogate of {model.Response.Name}: {Lower(s.Description)} ({scores})."
            : $"The surrogate of {model.Response.Name} is now {Lower(s.Description)} ({scores}); it was {Lower(before.Description)}.";
    }

    private static string Lower(string text) => text.Length > 0 ? char.ToLowerInvariant(text[0]) + text[1..] : text;

    /// <summary>Reports synchronously, on the fitting thread (<see cref="Progress{T}"/> would post).</summary>
    private sealed class Reporter(Action<SurrogateFitProgress> report) : IProgress<SurrogateFitProgress>
    {
        public void Report(SurrogateFitProgress value) => report(value);
    }

    private static partial class Log
    {
        [LoggerMessage(Level = LogLevel.Information, Message = "Study {StudyId}: the kept model of {Response} no longer applies ({Why}); comparing every model again")]
        public static partial void ChoiceNoLongerApplies(ILogger logger, int studyId, string response, string? why);

        [LoggerMessage(Level = LogLevel.Warning, Message = "Study {StudyId}: snapshot version {Version} was stored by someone else first; this one is dropped")]
        public static partial void VersionTaken(ILogger logger, int studyId, int version, Exception exception);
    }
}
