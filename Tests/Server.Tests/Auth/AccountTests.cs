using System.Collections.Concurrent;
using System.Net;
using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Logging;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Auth;

/// <summary>Accounts and tokens through the real host: password sign-in with lockout, tokens shown once and
/// revocable, invitations, rate limits, security headers, and no secret in any log line.</summary>
public sealed class AccountTests : IAsyncLifetime
{
    private readonly ConcurrentQueue<string> _log = new();
    private RunfoldApp _app = null!;

    public async Task InitializeAsync() =>
        _app = await RunfoldApp.StartAsync(
            extra: new Dictionary<string, string?> { ["RUNFOLD_SIGNIN_PER_MINUTE"] = "50", ["RUNFOLD_TOKEN_PER_MINUTE"] = "120" },
            logging: logging => logging.SetMinimumLevel(LogLevel.Debug).AddProvider(new CapturingLoggerProvider(_log)));

    public async Task DisposeAsync() => await _app.DisposeAsync();

    [Fact]
    public async Task A_token_is_shown_once_stored_as_a_hash_records_its_last_use_and_stops_working_when_revoked()
    {
        var person = _app.ClientWithToken(await TestTeam.PersonAsync(_app, "ana"));
        var created = await person.PostJsonAsync("/api/account/tokens", new TokenRequest("cluster jobs"));
        Assert.Equal(HttpStatusCode.Created, created.StatusCode);
        var token = await created.ReadAsync<ApiTokenCreated>();
        Assert.StartsWith("rf_", token.Token, StringComparison.Ordinal);
        Assert.StartsWith(token.Info.Prefix, token.Token, StringComparison.Ordinal);
        await using (var db = _app.Db())
        {
            var stored = await db.ApiTokens.SingleAsync(t => t.Id == token.Info.Id);
            Assert.NotEqual(token.Token, stored.TokenHash);
            Assert.DoesNotContain(token.Token, stored.TokenHash, StringComparison.Ordinal);
            Assert.Null(stored.LastUsedAt);
        }

        using var cluster = _app.ClientWithToken(token.Token);
        Assert.Equal(HttpStatusCode.OK, (await cluster.GetAsync("/api/studies")).StatusCode);
        var account = await (await person.GetAsync("/api/account")).ReadAsync<AccountDto>();
        var listed = Assert.Single(account.Tokens, t => t.Id == token.Info.Id);
        Assert.NotNull(listed.LastUsedAt);
        Assert.DoesNotContain(token.Token, await (await person.GetAsync("/api/account")).Content.ReadAsStringAsync(), StringComparison.Ordinal);

        Assert.Equal(HttpStatusCode.NoContent, (await person.DeleteAsync($"/api/account/tokens/{token.Info.Id}")).StatusCode);
        var refused = await cluster.GetAsync("/api/studies");
        Assert.Equal(HttpStatusCode.Unauthorized, refused.StatusCode);
        Assert.Contains("revoked", await refused.Content.ReadAsStringAsync(), StringComparison.Ordinal);
        Assert.Equal(HttpStatusCode.NotFound, (await person.DeleteAsync("/api/account/tokens/999999")).StatusCode);
    }

    [Fact]
    public async Task Password_sign_in_sets_the_cookie_and_five_failures_lock_the_account()
    {
        await TestTeam.PersonAsync(_app, "ben");
        using var browser = _app.CreateClient(new Microsoft.AspNetCore.Mvc.Testing.WebApplicationFactoryClientOptions { AllowAutoRedirect = false, HandleCookies = true });
        var antiforgery = await SignInFormAsync(browser);

        var ok = await browser.PostAsync("/auth/password", Form(antiforgery, ("userName", "ben"), ("password", TestTeam.Password)));
        Assert.Equal(HttpStatusCode.Redirect, ok.StatusCode);
        Assert.Equal("/", ok.Headers.Location?.OriginalString);
        var page = await browser.GetAsync("/account");
        Assert.Equal(HttpStatusCode.OK, page.StatusCode);

        using var other = _app.CreateClient(new Microsoft.AspNetCore.Mvc.Testing.WebApplicationFactoryClientOptions { AllowAutoRedirect = false, HandleCookies = true });
        var antiforgery2 = await SignInFormAsync(other);
        for (var i = 0; i < 5; i++)
        {
            var wrong = await other.PostAsync("/auth/password", Form(antiforgery2, ("userName", "ben"), ("password", "wrong-" + i)));
            Assert.Contains("error=", wrong.Headers.Location?.OriginalString, StringComparison.Ordinal);
        }
        var locked = await other.PostAsync("/auth/password", Form(antiforgery2, ("userName", "ben"), ("password", TestTeam.Password)));
        Assert.Contains("error=locked", locked.Headers.Location?.OriginalString, StringComparison.Ordinal);
    }

    [Fact]
    public async Task A_form_post_without_its_antiforgery_token_is_refused()
    {
        using var browser = _app.CreateClient(new Microsoft.AspNetCore.Mvc.Testing.WebApplicationFactoryClientOptions { AllowAutoRedirect = false });
        var response = await browser.PostAsync("/auth/password", new FormUrlEncodedContent([new("userName", "admin"), new("password", "x")]));
        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        var signOut = await browser.PostAsync("/auth/signout", new FormUrlEncodedContent([]));
        Assert.Equal(HttpStatusCode.BadRequest, signOut.StatusCode);
    }

    [Fact]
    public async Task An_invitation_link_creates_an_account_joins_the_study_once_and_is_audited()
    {
        var study = await TestTeam.CreateStudyAsync(_app, TestTeam.HeatSinkStudy("Invited"));
        using var admin = _app.AdminClient();
        var invitation = await (await admin.PostJsonAsync($"/api/studies/{study.Id}/invitations", new InvitationRequest(StudyRole.Analyst, "Chen, CFD group"))).ReadAsync<InvitationCreated>();
        Assert.Equal("/invitations/" + invitation.Code, invitation.Path);
        var pending = await (await admin.GetAsync($"/api/studies/{study.Id}/invitations")).ReadAsync<List<InvitationDto>>();
        Assert.Equal("Chen, CFD group", Assert.Single(pending).Note);

        using var browser = _app.CreateClient(new Microsoft.AspNetCore.Mvc.Testing.WebApplicationFactoryClientOptions { AllowAutoRedirect = false, HandleCookies = true });
        var page = await browser.GetStringAsync(invitation.Path);
        Assert.Contains("Invited", page, StringComparison.Ordinal);
        Assert.Contains("analyst", page, StringComparison.Ordinal);
        var antiforgery = AntiforgeryField(page);
        var joined = await browser.PostAsync("/auth/invitations/register", Form(antiforgery,
            ("code", invitation.Code), ("userName", "chen"), ("displayName", "Chen Li"), ("password", TestTeam.Password)));
        Assert.Equal($"/studies/{study.Id}", joined.Headers.Location?.OriginalString);
        Assert.Equal(HttpStatusCode.OK, (await browser.GetAsync($"/studies/{study.Id}")).StatusCode);

        var members = await (await admin.GetAsync($"/api/studies/{study.Id}/members")).ReadAsync<List<StudyMemberDto>>();
        Assert.Equal(StudyRole.Analyst, Assert.Single(members, m => m.UserName == "chen").Role);
        Assert.Single(await TestTeam.EventsAsync(_app, study.Id, "invitation.accepted"));

        using var late = _app.CreateClient(new Microsoft.AspNetCore.Mvc.Testing.WebApplicationFactoryClientOptions { AllowAutoRedirect = false, HandleCookies = true });
        var usedPage = await late.GetStringAsync(invitation.Path);
        Assert.Contains("has been used", usedPage, StringComparison.Ordinal);
    }

    [Fact]
    public async Task Too_many_requests_with_one_token_get_429_with_Retry_After()
    {
        using var person = _app.ClientWithToken(await TestTeam.PersonAsync(_app, "greedy"));
        HttpResponseMessage? refused = null;
        for (var i = 0; i < 200 && refused is null; i++)
        {
            var response = await person.GetAsync("/api/studies");
            if (response.StatusCode == HttpStatusCode.TooManyRequests) refused = response;
        }
        Assert.NotNull(refused);
        Assert.True(refused.Headers.RetryAfter is not null, "Retry-After is sent.");
        Assert.Contains("requests a minute", await refused.Content.ReadAsStringAsync(), StringComparison.Ordinal);
        using var admin = _app.AdminClient();
        Assert.Equal(HttpStatusCode.OK, (await admin.GetAsync("/api/studies")).StatusCode); // other tokens are not held back
    }

    [Fact]
    public async Task Pages_and_answers_carry_security_headers()
    {
        using var client = _app.ClientWithToken(null);
        var page = await client.GetAsync("/signin");
        Assert.Equal("nosniff", page.Headers.GetValues("X-Content-Type-Options").Single());
        Assert.Equal("DENY", page.Headers.GetValues("X-Frame-Options").Single());
        Assert.Contains("script-src 'self'", page.Headers.GetValues("Content-Security-Policy").Single(), StringComparison.Ordinal);
        Assert.Contains("frame-ancestors 'none'", page.Headers.GetValues("Content-Security-Policy").Single(), StringComparison.Ordinal);
        var api = await client.GetAsync("/api/studies");
        Assert.Equal("nosniff", api.Headers.GetValues("X-Content-Type-Options").Single());
    }

    [Fact]
    public async Task No_token_password_or_one_time_code_reaches_the_log()
    {
        var token = await TestTeam.PersonAsync(_app, "dora");
        using var dora = _app.ClientWithToken(token);
        var created = await (await dora.PostJsonAsync("/api/account/tokens", new TokenRequest("laptop"))).ReadAsync<ApiTokenCreated>();
        using var admin = _app.AdminClient();
        var user = await (await admin.PostJsonAsync("/api/users", new CreateUserRequest("eve"))).ReadAsync<UserCreated>();
        using var browser = _app.CreateClient(new Microsoft.AspNetCore.Mvc.Testing.WebApplicationFactoryClientOptions { AllowAutoRedirect = false, HandleCookies = true });
        Assert.Equal(HttpStatusCode.Redirect, (await browser.GetAsync(user.SignInPath)).StatusCode);
        var antiforgery = await SignInFormAsync(browser);
        await browser.PostAsync("/auth/password", Form(antiforgery, ("userName", "dora"), ("password", TestTeam.Password)));
        await _app.ClientWithToken("rf_guessed_token_value_123").GetAsync("/api/studies");

        var secrets = new[] { token, created.Token, user.SignInPath!["/auth/link/".Length..], TestTeam.Password, RunfoldApp.AdminToken, "rf_guessed_token_value_123" };
        Assert.NotEmpty(_log);
        foreach (var line in _log)
            foreach (var secret in secrets)
                Assert.DoesNotContain(secret, line, StringComparison.Ordinal);
    }

    private static async Task<string> SignInFormAsync(HttpClient browser) => AntiforgeryField(await browser.GetStringAsync("/signin"));

    private static string AntiforgeryField(string page)
    {
        var match = System.Text.RegularExpressions.Regex.Match(page, "name=\"__RequestVerificationToken\" type=\"hidden\" value=\"([^\"]+)\"");
        if (!match.Success) match = System.Text.RegularExpressions.Regex.Match(page, "type=\"hidden\" name=\"__RequestVerificationToken\" value=\"([^\"]+)\"");
        Assert.True(match.Success, "The page has an antiforgery field.");
        return match.Groups[1].Value;
    }

    private static FormUrlEncodedContent Form(string antiforgery, params (string Name, string Value)[] fields) =>
        new([new("__RequestVerificationToken", antiforgery), .. fields.Select(f => new KeyValuePair<string, string>(f.Name, f.Value))]);

    private sealed class CapturingLoggerProvider(ConcurrentQueue<string> lines) : ILoggerProvider
    {
        public ILogger CreateLogger(string categoryName) => new Logger(categoryName, lines);

        public void Dispose() { }

        private sealed class Logger(string category, ConcurrentQueue<string> lines) : ILogger
        {
            public IDisposable? BeginScope<TState>(TState state) where TState : notnull => null;

            public bool IsEnabled(LogLevel logLevel) => true;

            public void Log<TState>(LogLevel logLevel, EventId eventId, TState state, Exception? exception, Func<TState, Exception?, string> formatter) =>
                lines.Enqueue($"{category} {logLevel}: {formatter(state, exception)} {exception}");
        }
    }
}
