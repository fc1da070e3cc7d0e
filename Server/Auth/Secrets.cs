using System.Security.Cryptography;
using System.Text;

namespace Runfold.Server.Auth;

/// <summary>Random secrets (API tokens, sign-in codes) and their stored form, a SHA-256 hash.</summary>
public static class Secrets
{
    public const string TokenPrefix = "rf_";

    /// <summary>A new API token: "rf_" and 43 URL-safe characters (256 random bits).</summary>
    public static string NewToken() => TokenPrefix + NewCode();

    /// <summary>256 random bits, URL-safe base64 without padding.</summary>
    public static string NewCode() =>
        Convert.ToBase64String(RandomNumberGenerator.GetBytes(32)).TrimEnd('=').Replace('+', '-').Replace('/', '_');

    /// <summary>Lower-case hex SHA-256. Tokens are long random strings, so a fast hash is the right tool
    /// (a password hash would only slow every request).</summary>
    public static string Hash(string secret) =>
        Convert.ToHexStringLower(SHA256.HashData(Encoding.UTF8.GetBytes(secret)));

    /// <summary>What a person sees of a token in lists: its first characters.</summary>
    public static string DisplayPrefix(string token) => token.Length <= 10 ? token : token[..10];
}
