using System.Text.Json;
using Runfold.Shared.Modeling.Selection;
using Runfold.Shared.Studies;

namespace Runfold.Server.Analysis;

/// <summary>
/// How a response's model was chosen at the last comparison of every model: the recipe (updated by each refit),
/// the sentence of that comparison, the scores of every model compared and how many runs there were.
/// <see cref="CvRmse"/> is that of the latest snapshot, against which the next refit's error is weighed.
/// </summary>
public sealed record ModelChoice(ModelRecipe Recipe, string Description, string Reason, IReadOnlyList<ModelScoreDto> Compared, int ComparedAtRuns, double CvRmse);

/// <summary>What <c>AnalysisSnapshot.ModelsJson</c> holds: per response the recipe of its model and how it was
/// chosen, and the result revisions every model was fitted to — so any instance rebuilds the same models.</summary>
public sealed record StoredModels(IReadOnlyList<RunRevision> Runs, IReadOnlyDictionary<string, StoredModel> Responses)
{
    public string ToJson() => JsonSerializer.Serialize(this, RunfoldJson.Options);

    public static StoredModels? FromJson(string? json) =>
        json is null ? null : JsonSerializer.Deserialize<StoredModels>(json, RunfoldJson.Options);
}

/// <param name="ComparedNow">True when every model was compared for this snapshot; false when the choice of an
/// earlier comparison was refitted.</param>
public sealed record StoredModel(ModelRecipe Recipe, string ChoiceReason, int ComparedAtRuns, bool ComparedNow);

/// <summary>The choices of a study's responses as the worker that owns the study keeps them between refits.</summary>
public sealed class ModelChoices
{
    private readonly Dictionary<string, ModelChoice> _byResponse;

    public ModelChoices(IReadOnlyDictionary<string, ModelChoice>? choices = null, TimeSpan? lastComparison = null)
    {
        _byResponse = choices is null ? new(StringComparer.Ordinal) : new(choices, StringComparer.Ordinal);
        LastComparison = lastComparison;
    }

    public static ModelChoices None { get; } = new();

    /// <summary>How long the last comparison of every model took on this instance (unknown after a restart).</summary>
    public TimeSpan? LastComparison { get; }

    public IReadOnlyDictionary<string, ModelChoice> ByResponse => _byResponse;

    public ModelChoice? Of(string response) => _byResponse.GetValueOrDefault(response);

    /// <summary>The choices behind a stored snapshot (when another instance or an earlier run of this one
    /// computed it).</summary>
    public static ModelChoices From(AnalysisSnapshotDto? snapshot, StoredModels? models)
    {
        if (snapshot is null || models is null) return None;
        var choices = new Dictionary<string, ModelChoice>(StringComparer.Ordinal);
        foreach (var response in snapshot.Responses)
        {
            if (response.Model is not { } model || !models.Responses.TryGetValue(response.Name, out var stored)) continue;
            choices[response.Name] = new ModelChoice(stored.Recipe, model.Description, stored.ChoiceReason, model.Compared, stored.ComparedAtRuns, model.CvRmse);
        }
        return new ModelChoices(choices);
    }
}
