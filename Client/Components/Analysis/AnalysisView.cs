using Runfold.Shared.Studies;

namespace Runfold.Client.Components.Analysis;

/// <summary>What an analysis page shows: the study (with the reader's role) and the snapshot it is based on
/// (null before the first one). <see cref="Refresh"/> reads both again, e.g. after adding a wave.</summary>
public sealed record AnalysisView(StudyDetail Study, AnalysisSnapshotDto? Snapshot, Func<Task> Refresh)
{
    public bool IsLead => Study.YourRole == StudyRole.Lead;

    public ResponseSpec? Response(string name) => Study.Responses.FirstOrDefault(r => r.Name == name);

    public FactorSpec? Factor(string name) => Study.Factors.FirstOrDefault(f => f.Name == name);

    public string? UnitOf(string response) => Response(response)?.Unit;
}
