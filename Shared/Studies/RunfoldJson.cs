using System.Text.Json;
using System.Text.Json.Serialization;

namespace Runfold.Shared.Studies;

/// <summary>The JSON conventions of the API (DESIGN.md §5): camelCase, nulls left out, and "NaN"/"Infinity"
/// read as numbers so the validators can name the field instead of failing the whole body.</summary>
public static class RunfoldJson
{
    public static JsonSerializerOptions Options { get; } = Configure(new JsonSerializerOptions(JsonSerializerDefaults.Web));

    public static JsonSerializerOptions Configure(JsonSerializerOptions options)
    {
        ArgumentNullException.ThrowIfNull(options);
        options.PropertyNamingPolicy = JsonNamingPolicy.CamelCase;
        options.DictionaryKeyPolicy = null; // factor and response names keep their spelling
        options.DefaultIgnoreCondition = JsonIgnoreCondition.WhenWritingNull;
        options.NumberHandling = JsonNumberHandling.AllowNamedFloatingPointLiterals;
        return options;
    }
}
