using System.Net;
using System.Net.Http.Json;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data.Entities;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Infrastructure;

/// <summary>People with an API token each: accounts created through the admin API, tokens stored as the account
/// page would store them (hash only).</summary>
public static class TestTeam
{
    public const string Password = "Heat-sink-2026";

    /// <summary>Creates an account (with <see cref="Password"/>) and a token for it; returns the token.</summary>
    public static async Task<string> PersonAsync(RunfoldApp app, string userName, bool isAdmin = false)
    {
        ArgumentNullException.ThrowIfNull(app);
        using var admin = app.AdminClient();
        var created = await admin.PostJsonAsync("/api/users", new CreateUserRequest(userName, userName.ToUpperInvariant(), Password, isAdmin));
        Assert.True(created.StatusCode == HttpStatusCode.Created, await created.Content.ReadAsStringAsync());
        var user = (await created.ReadAsync<UserCreated>()).User;
        var token = Secrets.NewToken();
        await using var db = app.Db();
        db.ApiTokens.Add(new ApiToken { UserId = user.Id, Name = "tests", TokenHash = Secrets.Hash(token), Prefix = Secrets.DisplayPrefix(token), CreatedAt = DateTimeOffset.UtcNow });
        await db.SaveChangesAsync();
        return token;
    }

    /// <summary>Adds an existing account to a study with a role (as the admin).</summary>
    public static async Task JoinAsync(RunfoldApp app, int studyId, string userName, StudyRole role)
    {
        ArgumentNullException.ThrowIfNull(app);
        using var admin = app.AdminClient();
        var response = await admin.PutAsJsonAsync($"/api/studies/{studyId}/members/{userName}", new MemberRoleRequest(role), RunfoldJson.Options);
        Assert.True(response.IsSuccessStatusCode, await response.Content.ReadAsStringAsync());
    }

    /// <summary>A study with <paramref name="levels"/>-level full factorial runs over two factors and the demo's
    /// three responses.</summary>
    public static CreateStudyRequest HeatSinkStudy(string name, int levelsA = 3, int levelsB = 2) => new(
        name,
        [
            new FactorSpec("fin_height", FactorKind.Continuous, 20, 60, Unit: "mm"),
            new FactorSpec("air_velocity", FactorKind.Continuous, 1, 6, Unit: "m/s"),
        ],
        [
            new ResponseSpec("thermal_resistance", ResponseGoal.Minimize, Unit: "K/W"),
            new ResponseSpec("pressure_drop", ResponseGoal.Minimize, Upper: 60, Unit: "Pa"),
            new ResponseSpec("mass", ResponseGoal.Minimize, Unit: "g"),
        ],
        new DesignSpec(DesignMethod.FullFactorial, Levels: [levelsA, levelsB]));

    public static async Task<StudyDetail> CreateStudyAsync(RunfoldApp app, CreateStudyRequest request)
    {
        ArgumentNullException.ThrowIfNull(app);
        using var admin = app.AdminClient();
        var response = await admin.PostJsonAsync("/api/studies", request);
        Assert.True(response.StatusCode == HttpStatusCode.Created, await response.Content.ReadAsStringAsync());
        return await response.ReadAsync<StudyDetail>();
    }

    /// <summary>The audit events of a study of one kind.</summary>
    public static async Task<List<AuditEvent>> EventsAsync(RunfoldApp app, int studyId, string kind)
    {
        ArgumentNullException.ThrowIfNull(app);
        await using var db = app.Db();
        return await db.AuditEvents.AsNoTracking().Where(e => e.StudyId == studyId && e.Kind == kind).OrderBy(e => e.Id).ToListAsync();
    }
}
