using System.Globalization;

namespace Runfold.Client.Components;

/// <summary>"3, 4, 10-12" → [3, 4, 10, 11, 12].</summary>
public static class RunNumbers
{
    public const int MaxCount = 500;

    /// <summary>Null when the text is not a list of numbers and ranges (or names more than <see cref="MaxCount"/>).</summary>
    public static IReadOnlyList<int>? Parse(string? text)
    {
        if (string.IsNullOrWhiteSpace(text)) return null;
        var numbers = new List<int>();
        foreach (var part in text.Split([',', ';', ' '], StringSplitOptions.RemoveEmptyEntries))
        {
            var range = part.Split('-', 2);
            if (!int.TryParse(range[0], NumberStyles.None, CultureInfo.InvariantCulture, out var from)) return null;
            var to = from;
            if (range.Length == 2 && !int.TryParse(range[1], NumberStyles.None, CultureInfo.InvariantCulture, out to)) return null;
            if (to < from || to - from + numbers.Count >= MaxCount) return null;
            for (var n = from; n <= to; n++) numbers.Add(n);
        }
        return numbers.Distinct().ToList();
    }
}
