namespace Runfold.Client.Setup;

/// <summary>Which validation messages belong next to which field: a field's own key and the keys of its items
/// (<c>design.constraints</c> takes <c>design.constraints[1]</c>).</summary>
public static class ErrorKeys
{
    public static IReadOnlyList<string> For(IReadOnlyDictionary<string, string[]>? errors, string key)
    {
        if (errors is null || errors.Count == 0) return [];
        return [.. errors.Where(e => Belongs(e.Key, key)).SelectMany(e => e.Value)];
    }

    /// <summary>Messages whose keys no field on the page shows, so they are listed on their own and never lost.</summary>
    public static IReadOnlyList<string> Unplaced(IReadOnlyDictionary<string, string[]>? errors, IEnumerable<string> shownKeys)
    {
        if (errors is null || errors.Count == 0) return [];
        var shown = shownKeys.ToList();
        return [.. errors.Where(e => !shown.Any(k => Belongs(e.Key, k))).SelectMany(e => e.Value)];
    }

    private static bool Belongs(string errorKey, string fieldKey) =>
        string.Equals(errorKey, fieldKey, StringComparison.OrdinalIgnoreCase)
        || (errorKey.Length > fieldKey.Length && errorKey.StartsWith(fieldKey, StringComparison.OrdinalIgnoreCase) && errorKey[fieldKey.Length] == '[');
}
