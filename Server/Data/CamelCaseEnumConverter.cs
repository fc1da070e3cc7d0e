using System.Text.Json;
using Microsoft.EntityFrameworkCore.Storage.ValueConversion;

namespace Runfold.Server.Data;

/// <summary>Stores an enum as its camelCase name, the same spelling the API uses.</summary>
public sealed class CamelCaseEnumConverter<TEnum>() : ValueConverter<TEnum, string>(
    v => ToName(v), s => FromName(s))
    where TEnum : struct, Enum
{
    public static string ToName(TEnum value) => JsonNamingPolicy.CamelCase.ConvertName(value.ToString());

    public static TEnum FromName(string name) => Enum.Parse<TEnum>(name, ignoreCase: true);
}
