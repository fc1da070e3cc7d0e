using System.Globalization;
using System.Text.Json;
using System.Text.Json.Serialization;

namespace Runfold.Shared.Studies;

/// <summary>
/// One factor's value in natural units as the API shows it: a number for continuous and integer factors,
/// the level's name for a categorical factor.
/// </summary>
[JsonConverter(typeof(FactorValueJsonConverter))]
public readonly record struct FactorValue
{
    private FactorValue(double number, string? level) => (Number, Level) = (number, level);

    public double Number { get; }

    /// <summary>The level name when the factor is categorical; otherwise null.</summary>
    public string? Level { get; }

    public bool IsLevel => Level is not null;

    public static FactorValue Of(double number) => new(number, null);

    public static FactorValue OfLevel(string level) => new(double.NaN, level ?? throw new ArgumentNullException(nameof(level)));

    public override string ToString() => Level ?? Number.ToString("G", CultureInfo.InvariantCulture);
}

internal sealed class FactorValueJsonConverter : JsonConverter<FactorValue>
{
    public override FactorValue Read(ref Utf8JsonReader reader, Type typeToConvert, JsonSerializerOptions options) =>
        reader.TokenType switch
        {
            JsonTokenType.Number => FactorValue.Of(reader.GetDouble()),
            JsonTokenType.String => FactorValue.OfLevel(reader.GetString()!),
            _ => throw new JsonException("A factor value is a number or, for a categorical factor, the level's name."),
        };

    public override void Write(Utf8JsonWriter writer, FactorValue value, JsonSerializerOptions options)
    {
        if (value.Level is { } level) writer.WriteStringValue(level);
        else writer.WriteNumberValue(value.Number);
    }
}
