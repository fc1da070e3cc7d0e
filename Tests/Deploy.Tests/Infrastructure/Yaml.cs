using YamlDotNet.Core;
using YamlDotNet.Serialization;

namespace Runfold.Deploy.Tests.Infrastructure;

/// <summary>YAML read into plain maps, lists and strings (YamlDotNet), with a path lookup for assertions.</summary>
public static class Yaml
{
    private static readonly IDeserializer Reader = new DeserializerBuilder().Build();

    /// <summary>Every document of a file ("---"-separated), as maps.</summary>
    public static IReadOnlyList<Dictionary<object, object>> Documents(string text)
    {
        IParser parser = new Parser(new StringReader(text));
        parser.Consume<YamlDotNet.Core.Events.StreamStart>();
        var documents = new List<Dictionary<object, object>>();
        while (parser.Accept<YamlDotNet.Core.Events.DocumentStart>(out _))
        {
            if (Reader.Deserialize(parser) is Dictionary<object, object> map) documents.Add(map);
        }
        return documents;
    }

    /// <summary>The node at a path of map keys and list indexes ("spec", "template", "0"), or null.</summary>
    public static object? At(this object? node, params string[] path)
    {
        foreach (var step in path)
        {
            node = node switch
            {
                Dictionary<object, object> map => map.TryGetValue(step, out var child) ? child : null,
                List<object> list when int.TryParse(step, out var i) && i < list.Count => list[i],
                _ => null,
            };
            if (node is null) return null;
        }
        return node;
    }

    public static string? Text(this object? node, params string[] path) => node.At(path) as string;

    public static Dictionary<object, object> Map(this object? node, params string[] path) =>
        node.At(path) as Dictionary<object, object> ?? throw new Xunit.Sdk.XunitException($"No map at {string.Join('.', path)}.");

    public static List<object> List(this object? node, params string[] path) =>
        node.At(path) as List<object> ?? throw new Xunit.Sdk.XunitException($"No list at {string.Join('.', path)}.");
}
