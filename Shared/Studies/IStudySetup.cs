namespace Runfold.Shared.Studies;

/// <summary>The set-up page's calls: whether the signed-in person may create studies, a preview of a design
/// (nothing stored, the same generators as creation) and the creation itself.</summary>
public interface IStudySetup
{
    /// <summary>True when the signed-in person may create studies (the admin).</summary>
    Task<bool> CanCreateAsync(CancellationToken cancellationToken = default);

    /// <summary>The runs and quality figures the factors and design would give; validation errors are keyed like
    /// the API's (<c>factors[1].low</c>, <c>design.runs</c>).</summary>
    Task<Outcome<DesignPreview>> PreviewAsync(DesignPreviewRequest request, CancellationToken cancellationToken = default);

    /// <summary>Creates the study with its first wave of runs; the creator becomes its lead.</summary>
    Task<Outcome<StudyDetail>> CreateAsync(CreateStudyRequest request, CancellationToken cancellationToken = default);
}
