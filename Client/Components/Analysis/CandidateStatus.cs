using Runfold.Shared.Studies;

namespace Runfold.Client.Components.Analysis;

/// <summary>Where a candidate stands against its verification run.</summary>
public enum VerificationStage
{
    /// <summary>No verification run yet: the candidate is a prediction only.</summary>
    Unverified,
    /// <summary>A verification run exists and is open or claimed.</summary>
    Verifying,
    /// <summary>The verification run is done and every response lies within the model's cross-validated error.</summary>
    Verified,
    /// <summary>The verification run is done and at least one response misses by more than the cross-validated error.</summary>
    Disagrees,
    /// <summary>The verification run failed.</summary>
    RunFailed,
}

/// <summary>A candidate's badges, in words and classes the pages and the report share.</summary>
public static class CandidateStatus
{
    public static VerificationStage Stage(CandidateDto candidate)
    {
        ArgumentNullException.ThrowIfNull(candidate);
        return candidate.Verification switch
        {
            null => VerificationStage.Unverified,
            { State: RunState.Failed } => VerificationStage.RunFailed,
            { State: RunState.Done, Responses: { Count: > 0 } values } => values.All(v => v.WithinCvError) ? VerificationStage.Verified : VerificationStage.Disagrees,
            _ => VerificationStage.Verifying,
        };
    }

    /// <summary>The badges in reading order: (css class, word, explanation).</summary>
    public static IReadOnlyList<(string Css, string Word, string Why)> Badges(CandidateDto candidate)
    {
        ArgumentNullException.ThrowIfNull(candidate);
        var badges = new List<(string, string, string)>();
        if (candidate.Extrapolating)
            badges.Add(("badge-extrapolating", "extrapolating",
                $"Far from every run (nearest at {Formats.Number(candidate.NearestRunDistance)} in coded units): the prediction leans on the model's guess."));
        var run = candidate.Verification?.RunNumber;
        badges.Add(Stage(candidate) switch
        {
            VerificationStage.Verified => ("badge-verified", "verified", $"Run {run} confirmed the prediction within the cross-validated error."),
            VerificationStage.Disagrees => ("badge-disagrees", "verified: differs", $"Run {run} differs from the prediction by more than the cross-validated error."),
            VerificationStage.Verifying => ("badge-verifying", "verifying", $"Verification run {run} is {Formats.State(candidate.Verification!.State)}."),
            VerificationStage.RunFailed => ("badge-disagrees", "verification failed", $"Verification run {run} failed; reopen it or verify again."),
            _ => ("badge-unverified", "unverified", "A prediction only: no verification run yet."),
        });
        return badges;
    }
}
