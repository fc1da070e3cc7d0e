using Microsoft.AspNetCore.Identity;
using Runfold.Shared.Studies;

namespace Runfold.Server.Data.Entities;

/// <summary>A person (or a service account for cluster jobs). Study roles live in <see cref="StudyMember"/>.</summary>
public sealed class RunfoldUser : IdentityUser<Guid>
{
    public string? DisplayName { get; set; }

    /// <summary>The admin creates studies and users and acts as lead on every study.</summary>
    public bool IsAdmin { get; set; }

    public DateTimeOffset CreatedAt { get; set; }
}

/// <summary>A personal API token. Only its SHA-256 hash is stored; the token itself is shown once.</summary>
public sealed class ApiToken
{
    public int Id { get; set; }

    public Guid UserId { get; set; }

    public RunfoldUser? User { get; set; }

    public required string Name { get; set; }

    /// <summary>Lower-case hex SHA-256 of the token.</summary>
    public required string TokenHash { get; set; }

    /// <summary>The first characters of the token, so a person can tell their tokens apart.</summary>
    public required string Prefix { get; set; }

    public DateTimeOffset CreatedAt { get; set; }

    public DateTimeOffset? LastUsedAt { get; set; }

    public DateTimeOffset? RevokedAt { get; set; }
}

/// <summary>A one-time sign-in link (printed at first start). Only the hash of its code is stored.</summary>
public sealed class SignInLink
{
    public int Id { get; set; }

    public Guid UserId { get; set; }

    public required string CodeHash { get; set; }

    public DateTimeOffset CreatedAt { get; set; }

    public DateTimeOffset ExpiresAt { get; set; }

    public DateTimeOffset? UsedAt { get; set; }
}

/// <summary>An invitation by a study's lead: a one-time code (only its hash is stored) that adds the person who
/// accepts it to the study with the given role, creating their account when they have none.</summary>
public sealed class Invitation
{
    public int Id { get; set; }

    public int StudyId { get; set; }

    public StudyRole Role { get; set; }

    public required string CodeHash { get; set; }

    /// <summary>Whom the lead meant it for (a name or address), shown to the lead only.</summary>
    public string? Note { get; set; }

    public Guid CreatedById { get; set; }

    public DateTimeOffset CreatedAt { get; set; }

    public DateTimeOffset ExpiresAt { get; set; }

    public DateTimeOffset? AcceptedAt { get; set; }

    public Guid? AcceptedById { get; set; }

    public DateTimeOffset? RevokedAt { get; set; }
}
