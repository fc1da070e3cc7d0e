using System.Globalization;
using Runfold.Shared.Studies;

namespace Runfold.Client.Components.Analysis;

/// <summary>How the analysis reads in words, on the pages and in the HTML report alike.</summary>
public static class AnalysisText
{
    /// <summary>The caution of the design notes (§8), shown wherever candidates are.</summary>
    public const string CandidateCaution =
        "Candidates are predictions of the surrogate models, not results. Each shows its prediction interval (± one " +
        "standard deviation), is flagged \"extrapolating\" when it lies far from every run, and stays \"unverified\" " +
        "until a verification run confirms it.";

    public const string EngineeringCaution =
        "A design chosen this way must be confirmed by full simulation and reviewed under the applicable codes and " +
        "licensed engineering practice before it is built or used.";

    /// <summary>A surrogate's kind in words.</summary>
    public static string ModelKind(string kind) => kind switch
    {
        "linear" => "linear response surface",
        "interaction" => "linear response surface with interactions",
        "pureQuadratic" => "quadratic response surface without interactions",
        "quadratic" => "quadratic response surface",
        "gaussianProcess" => "Gaussian process (kriging)",
        "rbf" => "radial basis functions",
        "ensemble" => "ensemble of surrogates",
        "constant" => "constant (the mean of the runs)",
        _ => kind,
    };

    /// <summary>How far to trust a model by its cross-validated R². The bands are common practice for
    /// deterministic computer experiments, not a published threshold.</summary>
    public static (string Css, string Words) FitVerdict(double cvR2) => cvR2 switch
    {
        >= 0.9 => ("fit-good", "predicts well"),
        >= 0.7 => ("fit-fair", "usable with care"),
        _ => ("fit-poor", "not to be trusted yet"),
    };

    /// <summary>"0.412 ± 0.018 K/W": the standard deviation to two significant digits and the mean to the same
    /// decimal place (common practice for a value with its uncertainty); without the ± when the model gives no
    /// spread.</summary>
    public static string Predicted(PredictedValueDto value, string? unit)
    {
        ArgumentNullException.ThrowIfNull(value);
        string text;
        if (value.Sd is { } tiny && double.IsFinite(tiny) && tiny > 0 && Math.Abs(value.Mean) > 0 && tiny < 1e-4 * Math.Abs(value.Mean))
        {
            // Next to a run the model is all but sure: the mean to four digits, not to the sd's last place.
            text = $"{Formats.Number(value.Mean)} ± {Formats.Number(tiny)}";
        }
        else if (value.Sd is { } sd && double.IsFinite(sd) && sd > 0 && double.IsFinite(value.Mean))
        {
            var decimals = 1 - (int)Math.Floor(Math.Log10(sd));
            text = $"{Rounded(value.Mean, decimals)} ± {Rounded(sd, decimals)}";
        }
        else
        {
            text = Formats.Number(value.Mean);
        }
        return unit is null ? text : $"{text} {unit}";
    }

    /// <summary>A Sobol' index (a share between 0 and 1) to two decimals.</summary>
    public static string Index(double index) => double.IsFinite(index) ? index.ToString("0.00", CultureInfo.InvariantCulture) : "–";

    /// <summary>A value rounded to <paramref name="decimals"/> places (negative: to tens, hundreds …), thousands
    /// separated.</summary>
    private static string Rounded(double value, int decimals)
    {
        if (decimals >= 0)
        {
            decimals = Math.Min(decimals, 12);
            return Math.Round(value, decimals).ToString("N" + decimals.ToString(CultureInfo.InvariantCulture), CultureInfo.InvariantCulture);
        }
        var step = Math.Pow(10, -decimals);
        return (Math.Round(value / step) * step).ToString("N0", CultureInfo.InvariantCulture);
    }

    /// <summary>A fraction as a percentage: "97 %", "0.4 %", "100 %".</summary>
    public static string Percent(double fraction)
    {
        if (!double.IsFinite(fraction)) return "–";
        var percent = 100 * fraction;
        return (Math.Abs(percent) < 10 && percent != Math.Round(percent) ? percent.ToString("0.#", CultureInfo.InvariantCulture) : percent.ToString("0", CultureInfo.InvariantCulture)) + " %";
    }

    /// <summary>"12 s ago", "4 min ago", "3 h ago", "2 d ago"; "just now" under a second.</summary>
    public static string Ago(TimeSpan elapsed)
    {
        if (elapsed < TimeSpan.FromSeconds(1)) return "just now";
        if (elapsed < TimeSpan.FromMinutes(1)) return $"{(int)elapsed.TotalSeconds} s ago";
        if (elapsed < TimeSpan.FromHours(1)) return $"{(int)elapsed.TotalMinutes} min ago";
        if (elapsed < TimeSpan.FromDays(2)) return $"{(int)elapsed.TotalHours} h ago";
        return $"{(int)elapsed.TotalDays} d ago";
    }

    public static string Direction(EffectDirectionDto direction) => direction switch
    {
        EffectDirectionDto.Raises => "raises",
        EffectDirectionDto.Lowers => "lowers",
        EffectDirectionDto.Mixed => "raises or lowers",
        _ => "no clear effect",
    };

    public static string DirectionMark(EffectDirectionDto direction) => direction switch
    {
        EffectDirectionDto.Raises => "↑",
        EffectDirectionDto.Lowers => "↓",
        EffectDirectionDto.Mixed => "↕",
        _ => "·",
    };

    /// <summary>The hard limit of a response in words ("≤ 60 Pa", "≥ 5 W", "within 2 – 4 mm"), or null.</summary>
    public static string? Limit(ResponseSpec response)
    {
        ArgumentNullException.ThrowIfNull(response);
        var unit = response.Unit is null ? "" : " " + response.Unit;
        return (response.Lower, response.Upper) switch
        {
            ({ } lo, { } hi) => $"within {Formats.Number(lo)} – {Formats.Number(hi)}{unit}",
            (null, { } hi) => $"≤ {Formats.Number(hi)}{unit}",
            ({ } lo, null) => $"≥ {Formats.Number(lo)}{unit}",
            _ => null,
        };
    }

    public static string GoalWord(ResponseGoal goal) => goal switch
    {
        ResponseGoal.Minimize => "lower is better",
        ResponseGoal.Maximize => "higher is better",
        ResponseGoal.Target => "closer to the target is better",
        ResponseGoal.Range => "inside the range is better",
        _ => "observed only",
    };

    /// <summary>"name [unit]" for axis titles and column heads.</summary>
    public static string Label(string name, string? unit) => unit is null ? name : $"{name} [{unit}]";

    /// <summary>What the snapshot is based on: "based on 47 of 81 runs (2 failed)".</summary>
    public static string BasedOn(AnalysisSnapshotDto snapshot)
    {
        ArgumentNullException.ThrowIfNull(snapshot);
        var failed = snapshot.FailedRuns > 0 ? $", {snapshot.FailedRuns} failed left out" : "";
        return $"based on {snapshot.BasedOnRuns} of {snapshot.TotalRuns} runs{failed}";
    }
}
