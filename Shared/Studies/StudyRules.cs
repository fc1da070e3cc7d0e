namespace Runfold.Shared.Studies;

/// <summary>A study definition that passed every check: what creation stores.</summary>
public sealed record StudyDefinition(string Name, string? Description, FactorSpace Factors, ResponseSet Responses);

/// <summary>The checks a study definition must pass before anything is stored.</summary>
public static class StudyRules
{
    public const int MaxNameLength = 200;
    public const int MaxDescriptionLength = 10_000;

    public static Validated<StudyDefinition> Check(CreateStudyRequest? request)
    {
        var errors = new ValidationErrors();
        if (request is null)
        {
            errors.Add("body", "The request needs a JSON body with name, factors, responses and design.");
            return Validated<StudyDefinition>.Fail(errors);
        }
        var name = request.Name?.Trim();
        if (string.IsNullOrEmpty(name)) errors.Add("name", "The study needs a name.");
        else if (name.Length > MaxNameLength) errors.Add("name", $"The study name is longer than {MaxNameLength} characters.");
        if (request.Description is { Length: > MaxDescriptionLength })
            errors.Add("description", $"The description is longer than {MaxDescriptionLength} characters.");

        var factors = FactorSpace.Create(request.Factors);
        errors.AddRange(factors.Errors);
        var responses = ResponseSet.Create(request.Responses, factors.Value);
        errors.AddRange(responses.Errors);
        if (request.Design is null) errors.Add("design", "The study needs a design, for example {\"method\": \"fullFactorial\"}.");

        return errors.IsEmpty
            ? Validated<StudyDefinition>.Ok(new StudyDefinition(name!, request.Description?.Trim(), factors.Value!, responses.Value!))
            : Validated<StudyDefinition>.Fail(errors);
    }
}
