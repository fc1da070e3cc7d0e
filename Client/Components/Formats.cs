using System.Globalization;
using Runfold.Shared.Studies;

namespace Runfold.Client.Components;

/// <summary>Number and unit formats used on every page, so a value reads the same everywhere.</summary>
public static class Formats
{
    /// <summary>Four significant digits, thousands separated, trailing zeros dropped; an exponent only for
    /// very large or very small magnitudes.</summary>
    public static string Number(double value)
    {
        if (!double.IsFinite(value)) return "–";
        var magnitude = Math.Abs(value);
        if (magnitude == 0) return "0";
        if (magnitude >= 1e6 || magnitude < 1e-3) return value.ToString("0.###e+0", CultureInfo.InvariantCulture);
        var decimals = Math.Max(0, 3 - (int)Math.Floor(Math.Log10(magnitude)));
        var text = Math.Round(value, decimals).ToString("N" + decimals.ToString(CultureInfo.InvariantCulture), CultureInfo.InvariantCulture);
        return text.Contains('.', StringComparison.Ordinal) ? text.TrimEnd('0').TrimEnd('.') : text;
    }

    /// <summary>An instant as UTC, to the minute: "2026-11-30 08:15 UTC".</summary>
    public static string Instant(DateTimeOffset at) => at.UtcDateTime.ToString("yyyy-MM-dd HH:mm", CultureInfo.InvariantCulture) + " UTC";

    /// <summary>A time of day as UTC to the second, for "updated at" marks: "08:15:03 UTC".</summary>
    public static string TimeOfDay(DateTimeOffset at) => at.UtcDateTime.ToString("HH:mm:ss", CultureInfo.InvariantCulture) + " UTC";

    /// <summary>A duration in the largest unit that reads well: "45 s", "12 min", "3.5 h", "2.1 days".</summary>
    public static string Duration(TimeSpan span)
    {
        var seconds = Math.Abs(span.TotalSeconds);
        return seconds switch
        {
            < 90 => $"{Number(Math.Round(seconds))} s",
            < 90 * 60 => $"{Number(Math.Round(seconds / 60))} min",
            < 48 * 3600 => $"{Number(Math.Round(seconds / 3600, 1))} h",
            _ => $"{Number(Math.Round(seconds / 86400, 1))} days",
        };
    }

    /// <summary>A predicted value with its standard deviation when there is one: "0.412 ± 0.018 K/W".</summary>
    public static string Predicted(double mean, double? sd, string? unit) =>
        (sd is { } s && double.IsFinite(s) ? $"{Number(mean)} ± {Number(s)}" : Number(mean)) + (unit is null ? "" : " " + unit);

    public static string Role(StudyRole role) => role.ToString().ToLowerInvariant();

    public static string State(RunState state) => state.ToString().ToLowerInvariant();

    public static string WithUnit(double value, string? unit) => unit is null ? Number(value) : $"{Number(value)} {unit}";

    public static string Value(FactorValue value) => value.Level ?? Number(value.Number);

    public static string Range(FactorSpec factor)
    {
        ArgumentNullException.ThrowIfNull(factor);
        return factor.Kind == FactorKind.Categorical
            ? string.Join(" · ", factor.Levels ?? [])
            : $"{Number(factor.Low ?? double.NaN)} – {Number(factor.High ?? double.NaN)}{(factor.Unit is null ? "" : " " + factor.Unit)}";
    }

    public static string Goal(ResponseSpec response)
    {
        ArgumentNullException.ThrowIfNull(response);
        var unit = response.Unit is null ? "" : " " + response.Unit;
        var goal = response.Goal switch
        {
            ResponseGoal.Minimize => "minimize",
            ResponseGoal.Maximize => "maximize",
            ResponseGoal.Target => $"target {Number(response.Target ?? double.NaN)}{unit}",
            ResponseGoal.Range => $"keep within {Number(response.Lower ?? double.NaN)} – {Number(response.Upper ?? double.NaN)}{unit}",
            _ => "observe",
        };
        if (response.Goal != ResponseGoal.Range)
        {
            if (response.Upper is { } hi) goal += $", at most {Number(hi)}{unit}";
            if (response.Lower is { } lo) goal += $", at least {Number(lo)}{unit}";
        }
        return goal;
    }
}
