using System.Text.Json.Serialization;

namespace Runfold.Shared.Studies;

// The analysis snapshot as the API (GET /api/studies/{id}/analysis, DESIGN.md §5) and the pages see it. A snapshot
// is immutable and tagged with the result-set version it was built from; the live-analysis worker writes them,
// the pages and API clients only read them.

/// <summary>One immutable analysis of a study: per response the chosen surrogate, its fit check and the
/// sensitivity ranking; the ranked candidates across responses, and what the candidate search noted
/// (<see cref="CandidateNotes"/>: no goal to rank by, fewer distinct designs than asked, …).</summary>
public sealed record AnalysisSnapshotDto(
    int Version,
    long ResultSetVersion,
    int BasedOnRuns,
    int TotalRuns,
    int FailedRuns,
    DateTimeOffset ComputedAt,
    IReadOnlyList<ResponseAnalysisDto> Responses,
    IReadOnlyList<CandidateDto> Candidates,
    string? Notice = null,
    int? RunsStillNeeded = null,
    IReadOnlyList<string>? CandidateNotes = null);

/// <summary>One response of the snapshot. <see cref="Model"/> is null when no model could be fitted yet, and then
/// <see cref="Refusal"/> says why (for example how many more done runs are needed).</summary>
public sealed record ResponseAnalysisDto(
    string Name,
    string? Unit,
    ModelSummaryDto? Model,
    FitCheckDto? FitCheck,
    IReadOnlyList<FactorSensitivityDto> Sensitivity,
    IReadOnlyList<MainEffectDto> MainEffects,
    string? Refusal = null);

/// <summary>The selected surrogate: its kind ("quadratic", "gaussianProcess", "rbf", "ensemble", …), cross-validated
/// scores, and the reason it was chosen over the others compared. <see cref="ComparedAtRuns"/> is the number of done
/// runs at which the models were last all compared (<see cref="Compared"/>): between two comparisons the chosen
/// model is refitted to each new result with its hyper-parameters kept.</summary>
public sealed record ModelSummaryDto(
    string Kind,
    string Description,
    double CvR2,
    double CvRmse,
    double Nrmse,
    double MaxAbsError,
    string Reason,
    bool LogResponse,
    IReadOnlyList<ModelScoreDto> Compared,
    int? ComparedAtRuns = null);

public sealed record ModelScoreDto(string Kind, string Description, double CvRmse, double CvR2);

/// <summary>Cross-validated predictions of the done runs (each predicted by a model that did not see it), for the
/// predicted-vs-observed and residual plots.</summary>
public sealed record FitCheckDto(
    IReadOnlyList<int> RunNumbers,
    IReadOnlyList<double> Observed,
    IReadOnlyList<double> Predicted,
    IReadOnlyList<double> Residuals,
    string Method);

/// <summary>Sobol' indices of one factor for one response with bootstrap 95 % intervals, and the direction of its
/// effect.</summary>
public sealed record FactorSensitivityDto(
    string Factor,
    double FirstOrder,
    double Total,
    double TotalLow,
    double TotalHigh,
    double FirstOrderLow,
    double FirstOrderHigh,
    EffectDirectionDto Direction);

[JsonConverter(typeof(CamelCaseEnumConverter<EffectDirectionDto>))]
public enum EffectDirectionDto { Raises, Lowers, Mixed, None }

/// <summary>E[y | factor] on a grid of the factor's natural values (level indices for a categorical factor), with
/// the spread of y at each grid value.</summary>
public sealed record MainEffectDto(string Factor, IReadOnlyList<double> Natural, IReadOnlyList<double> Mean, IReadOnlyList<double> Spread);

/// <summary>A ranked candidate design from the surrogates: a prediction until a verification run confirms it.</summary>
public sealed record CandidateDto(
    int Rank,
    IReadOnlyDictionary<string, FactorValue> Factors,
    IReadOnlyDictionary<string, PredictedValueDto> Predicted,
    double Desirability,
    int ParetoRank,
    bool Extrapolating,
    double NearestRunDistance,
    IReadOnlyDictionary<string, double>? LimitProbabilities = null,
    CandidateVerificationDto? Verification = null);

/// <summary>A predicted mean and, when the model gives one, its standard deviation.</summary>
public sealed record PredictedValueDto(double Mean, double? Sd);

/// <summary>The verification run of a candidate; <see cref="Responses"/> is filled once the run is done.</summary>
public sealed record CandidateVerificationDto(int RunNumber, RunState State, IReadOnlyList<VerificationValueDto>? Responses);

/// <summary>Predicted against observed for one response of a verification run, and whether the error lies inside
/// the model's cross-validated error.</summary>
public sealed record VerificationValueDto(string Response, double Predicted, double Observed, double Error, double CvRmse, bool WithinCvError);

/// <summary>One step of the convergence view: how the best candidate's predicted desirability and each response's
/// cross-validated NRMSE moved as runs came in.</summary>
public sealed record AnalysisHistoryPointDto(
    int Version,
    int BasedOnRuns,
    DateTimeOffset ComputedAt,
    double? BestDesirability,
    IReadOnlyDictionary<string, double> Nrmse);

/// <summary>A running refit: its stage ("reading runs", "fitting pressure_drop", "sensitivity", "candidates", …)
/// and how far it is.</summary>
public sealed record AnalysisProgressDto(int StudyId, long ResultSetVersion, string Stage, double Percent);

/// <summary>POST /api/studies/{id}/predict: points in natural units by factor name.</summary>
public sealed record PredictRequest(IReadOnlyList<IReadOnlyDictionary<string, FactorValue>> Points);

/// <summary>POST /api/studies/{id}/waves. Kind: infill, augment or verify; criterion for infill:
/// expectedImprovement (default), variance or maximin, and optionally the one response it improves or learns
/// (default: the overall desirability, or every response with a goal or limit); candidateRank for verify (without
/// it, the best <see cref="Count"/> unverified candidates).</summary>
public sealed record WaveRequest(string Kind, int? Count = null, string? Criterion = null, int? CandidateRank = null, string? Response = null);

[JsonConverter(typeof(CamelCaseEnumConverter<StudyLiveEventKind>))]
public enum StudyLiveEventKind
{
    /// <summary>Runs or results changed (claims included); the snapshot may follow.</summary>
    Changed,
    /// <summary>A new analysis snapshot is stored.</summary>
    Snapshot,
    /// <summary>A refit is running: see <see cref="StudyLiveEvent.Progress"/>.</summary>
    Progress,
}

/// <summary>What pages and server-sent-event clients of a study are told as it happens.</summary>
public sealed record StudyLiveEvent(int StudyId, StudyLiveEventKind Kind, long ResultSetVersion, int? SnapshotVersion = null, AnalysisProgressDto? Progress = null);

/// <summary>What the pages read of a study's analysis, and how they follow it live.</summary>
public interface IStudyAnalysis
{
    /// <summary>The latest snapshot; an Ok outcome with a null value when none has been computed yet.</summary>
    Task<Outcome<AnalysisSnapshotDto?>> GetLatestAsync(int studyId, CancellationToken cancellationToken = default);

    Task<Outcome<IReadOnlyList<AnalysisHistoryPointDto>>> GetHistoryAsync(int studyId, CancellationToken cancellationToken = default);

    /// <summary>Predictions of the latest snapshot's models, one dictionary (response → value) per point.</summary>
    Task<Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>> PredictAsync(
        int studyId, PredictRequest request, CancellationToken cancellationToken = default);

    /// <summary>Adds a wave of runs from the latest snapshot's models (lead only).</summary>
    Task<Outcome<IReadOnlyList<RunDto>>> AddWaveAsync(int studyId, WaveRequest request, CancellationToken cancellationToken = default);

    /// <summary>The refit under way for the study, if any.</summary>
    AnalysisProgressDto? CurrentProgress(int studyId);

    /// <summary>Calls <paramref name="onEvent"/> for every live event of the study until disposed.</summary>
    IDisposable Follow(int studyId, Func<StudyLiveEvent, Task> onEvent);
}
