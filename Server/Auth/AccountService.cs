using Microsoft.AspNetCore.Identity;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Auth;

/// <summary>Accounts: a person's own password and personal API tokens, and (for the admin) creating accounts.
/// Tokens are shown once and stored as a SHA-256 hash; revoking one takes effect on its next request.</summary>
public sealed class AccountService(RunfoldDbContext db, UserManager<RunfoldUser> users, SignInLinks links, TimeProvider time)
{
    public const int MaxTokensPerPerson = 50;

    public async Task<Outcome<AccountDto>> GetAsync(Caller caller, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var user = await db.Users.AsNoTracking().FirstOrDefaultAsync(u => u.Id == caller.UserId, cancellationToken);
        if (user is null) return Outcome<AccountDto>.NotFound("Your account no longer exists.");
        var tokens = await db.ApiTokens.AsNoTracking().Where(t => t.UserId == caller.UserId)
            .OrderBy(t => t.RevokedAt != null).ThenByDescending(t => t.CreatedAt)
            .Select(t => new ApiTokenDto(t.Id, t.Name, t.Prefix, t.CreatedAt, t.LastUsedAt, t.RevokedAt))
            .ToListAsync(cancellationToken);
        return Outcome<AccountDto>.Ok(new AccountDto(user.Id, user.UserName ?? "", user.DisplayName, user.IsAdmin, user.PasswordHash is not null, tokens));
    }

    public async Task<Outcome<ApiTokenCreated>> CreateTokenAsync(Caller caller, TokenRequest? request, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var name = request?.Name?.Trim();
        if (string.IsNullOrEmpty(name))
            return Outcome<ApiTokenCreated>.Invalid(ValidationErrors.Single("name", "Name the token after where it is used, for example 'cluster jobs'."));
        if (name.Length > 100) return Outcome<ApiTokenCreated>.Invalid(ValidationErrors.Single("name", "The token name is longer than 100 characters."));
        if (await db.ApiTokens.CountAsync(t => t.UserId == caller.UserId && t.RevokedAt == null, cancellationToken) >= MaxTokensPerPerson)
            return Outcome<ApiTokenCreated>.Conflict($"You have {MaxTokensPerPerson} active tokens; revoke one you no longer use first.");
        var token = Secrets.NewToken();
        var now = time.GetUtcNow();
        var stored = new ApiToken { UserId = caller.UserId, Name = name, TokenHash = Secrets.Hash(token), Prefix = Secrets.DisplayPrefix(token), CreatedAt = now };
        db.ApiTokens.Add(stored);
        db.AuditEvents.Add(Audit.Event(caller, null, null, "token.created", $"{caller.UserName} created the API token '{name}' ({stored.Prefix}…)", now));
        await db.SaveChangesAsync(cancellationToken);
        return Outcome<ApiTokenCreated>.Ok(new ApiTokenCreated(new ApiTokenDto(stored.Id, stored.Name, stored.Prefix, now, null, null), token));
    }

    public async Task<Outcome<ApiTokenDto>> RevokeTokenAsync(Caller caller, int tokenId, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var now = time.GetUtcNow();
        var revoked = await db.ApiTokens.Where(t => t.Id == tokenId && t.UserId == caller.UserId && t.RevokedAt == null)
            .ExecuteUpdateAsync(s => s.SetProperty(t => t.RevokedAt, now), cancellationToken);
        var token = await db.ApiTokens.AsNoTracking().Where(t => t.Id == tokenId && t.UserId == caller.UserId)
            .Select(t => new ApiTokenDto(t.Id, t.Name, t.Prefix, t.CreatedAt, t.LastUsedAt, t.RevokedAt)).FirstOrDefaultAsync(cancellationToken);
        if (token is null) return Outcome<ApiTokenDto>.NotFound($"You have no API token {tokenId}.");
        if (revoked == 1)
        {
            db.AuditEvents.Add(Audit.Event(caller, null, null, "token.revoked", $"{caller.UserName} revoked the API token '{token.Name}' ({token.Prefix}…)", now));
            await db.SaveChangesAsync(cancellationToken);
        }
        return Outcome<ApiTokenDto>.Ok(token);
    }

    public async Task<Outcome<AccountDto>> ChangePasswordAsync(Caller caller, PasswordChange? change, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        if (string.IsNullOrEmpty(change?.NewPassword))
            return Outcome<AccountDto>.Invalid(ValidationErrors.Single("newPassword", "Type the new password."));
        var user = await users.FindByIdAsync(caller.UserId.ToString());
        if (user is null) return Outcome<AccountDto>.NotFound("Your account no longer exists.");
        var result = user.PasswordHash is null
            ? await users.AddPasswordAsync(user, change.NewPassword)
            : await users.ChangePasswordAsync(user, change.CurrentPassword ?? "", change.NewPassword);
        if (!result.Succeeded) return Outcome<AccountDto>.Invalid(IdentityErrors(result, "newPassword"));
        db.AuditEvents.Add(Audit.Event(caller, null, null, "account.password", $"{caller.UserName} changed their password", time.GetUtcNow()));
        await db.SaveChangesAsync(cancellationToken);
        return await GetAsync(caller, cancellationToken);
    }

    /// <summary>The admin creates an account. Without a password the answer carries a one-time sign-in link for
    /// the person, who then sets a password on their account page.</summary>
    public async Task<Outcome<UserCreated>> CreateUserAsync(Caller caller, CreateUserRequest? request, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        if (!caller.IsAdmin) return Outcome<UserCreated>.Forbidden("Only the admin creates accounts; a study's lead can send an invitation link instead.");
        if (string.IsNullOrWhiteSpace(request?.UserName))
            return Outcome<UserCreated>.Invalid(ValidationErrors.Single("userName", "The account needs a user name."));
        var (user, errors) = await CreateAsync(request.UserName, request.DisplayName, request.Password, request.IsAdmin);
        if (user is null) return Outcome<UserCreated>.Invalid(errors!);
        db.AuditEvents.Add(Audit.Event(caller, null, null, "account.created", $"{caller.UserName} created the account {user.UserName}{(user.IsAdmin ? " (admin)" : "")}", time.GetUtcNow()));
        await db.SaveChangesAsync(cancellationToken);
        var link = request.Password is null ? "/auth/link/" + await links.CreateAsync(user.Id, cancellationToken) : null;
        return Outcome<UserCreated>.Ok(new UserCreated(ToDto(user), link));
    }

    public async Task<Outcome<IReadOnlyList<UserDto>>> ListUsersAsync(Caller caller, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        if (!caller.IsAdmin) return Outcome<IReadOnlyList<UserDto>>.Forbidden("Only the admin lists accounts.");
        var all = await db.Users.AsNoTracking().OrderBy(u => u.UserName).ToListAsync(cancellationToken);
        return Outcome<IReadOnlyList<UserDto>>.Ok([.. all.Select(u => ToDto(u))]);
    }

    /// <summary>A new account through Identity (password rules, unique user name).</summary>
    internal async Task<(RunfoldUser? User, ValidationErrors? Errors)> CreateAsync(string userName, string? displayName, string? password, bool isAdmin = false)
    {
        var user = new RunfoldUser
        {
            Id = Guid.CreateVersion7(),
            UserName = userName.Trim(),
            DisplayName = string.IsNullOrWhiteSpace(displayName) ? null : displayName.Trim(),
            IsAdmin = isAdmin,
            CreatedAt = time.GetUtcNow(),
            LockoutEnabled = true,
        };
        var result = password is null ? await users.CreateAsync(user) : await users.CreateAsync(user, password);
        return result.Succeeded ? (user, null) : (null, IdentityErrors(result, "password"));
    }

    internal static ValidationErrors IdentityErrors(IdentityResult result, string passwordField)
    {
        var errors = new ValidationErrors();
        foreach (var error in result.Errors)
            errors.Add(error.Code.StartsWith("Password", StringComparison.Ordinal) ? passwordField
                : error.Code.Contains("UserName", StringComparison.Ordinal) ? "userName" : "account", error.Description);
        return errors;
    }

    private UserDto ToDto(RunfoldUser u) =>
        new(u.Id, u.UserName ?? "", u.DisplayName, u.IsAdmin, u.PasswordHash is not null, u.LockoutEnd is { } end && end > time.GetUtcNow());
}
