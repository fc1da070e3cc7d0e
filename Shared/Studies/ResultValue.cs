using System.Globalization;

namespace Runfold.Shared.Studies;

/// <summary>A response value as it arrived: a number (possibly NaN or infinite, which the checks refuse by name)
/// or text that is not a number.</summary>
public readonly record struct ResultValue
{
    private ResultValue(double number, string? text) => (Number, Text) = (number, text);

    public double Number { get; }

    /// <summary>The text as given when it is not a number; null for a number.</summary>
    public string? Text { get; }

    public bool IsNumber => Text is null;

    public static ResultValue Of(double number) => new(number, null);

    public static ResultValue NotANumber(string text) => new(double.NaN, text ?? "");

    /// <summary>Reads text typed by a person or found in a file, with the given decimal separator ('.' or ',').
    /// "NaN" and "Infinity" are read as numbers so the checks can refuse them by name.</summary>
    public static ResultValue Parse(string text, char decimalSeparator = '.')
    {
        ArgumentNullException.ThrowIfNull(text);
        var trimmed = text.Trim();
        var normal = decimalSeparator == ',' ? trimmed.Replace(',', '.') : trimmed;
        if (normal.Length > 0 && normal.IndexOf(',') < 0
            && double.TryParse(normal, NumberStyles.Float, CultureInfo.InvariantCulture, out var number))
            return Of(number);
        return trimmed.ToUpperInvariant() switch
        {
            "NAN" => Of(double.NaN),
            "INF" or "INFINITY" or "+INFINITY" or "+INF" => Of(double.PositiveInfinity),
            "-INF" or "-INFINITY" => Of(double.NegativeInfinity),
            _ => NotANumber(trimmed),
        };
    }
}
