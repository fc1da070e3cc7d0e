using System.Buffers.Binary;
using System.Buffers.Text;
using System.Security.Cryptography;
using Microsoft.AspNetCore.DataProtection;

namespace Runfold.Server.Sharing;

/// <summary>
/// A share link's token: the link's and the study's ids, signed and encrypted with ASP.NET Data Protection (whose
/// key ring lives in the database, so every server instance reads every other's tokens). The token cannot be
/// forged or pointed at another study; whether it still works is the stored row's business (expiry, revocation).
/// </summary>
public sealed class ShareLinkTokens(IDataProtectionProvider protection)
{
    private readonly IDataProtector _protector = protection.CreateProtector("Runfold.Sharing.ShareLink.v1");

    /// <summary>Longer input is not a token: refused before any decoding.</summary>
    public const int MaxLength = 512;

    public string Issue(int linkId, int studyId)
    {
        var payload = new byte[8];
        BinaryPrimitives.WriteInt32BigEndian(payload, linkId);
        BinaryPrimitives.WriteInt32BigEndian(payload.AsSpan(4), studyId);
        return Base64Url.EncodeToString(_protector.Protect(payload));
    }

    /// <summary>The ids a token names, or null for anything this server did not issue.</summary>
    public (int LinkId, int StudyId)? Read(string? token)
    {
        if (string.IsNullOrWhiteSpace(token) || token.Length > MaxLength) return null;
        try
        {
            var payload = _protector.Unprotect(Base64Url.DecodeFromChars(token.Trim()));
            if (payload.Length != 8) return null;
            return (BinaryPrimitives.ReadInt32BigEndian(payload), BinaryPrimitives.ReadInt32BigEndian(payload.AsSpan(4)));
        }
        catch (Exception e) when (e is CryptographicException or FormatException)
        {
            return null;
        }
    }

    public static string PathOf(string token) => "/shared/" + token;
}
