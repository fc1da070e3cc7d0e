namespace Runfold.Shared.Studies;

/// <summary>What the pages read about studies and runs, for the signed-in person. Implemented by the server;
/// component tests use simple fakes.</summary>
public interface IStudyCatalog
{
    Task<IReadOnlyList<StudySummary>> ListStudiesAsync(CancellationToken cancellationToken = default);

    Task<Outcome<StudyDetail>> GetStudyAsync(int studyId, CancellationToken cancellationToken = default);

    Task<Outcome<IReadOnlyList<RunDto>>> ListRunsAsync(int studyId, RunState? state = null, CancellationToken cancellationToken = default);
}
