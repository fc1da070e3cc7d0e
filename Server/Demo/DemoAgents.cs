using System.Diagnostics;
using System.Globalization;
using System.Net;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json;
using Runfold.Server.Telemetry;
using Runfold.Shared.Studies;

namespace Runfold.Server.Demo;

/// <summary>How the simulated analysts behave. Delays are demo seconds; <see cref="TimeScale"/> turns them into the
/// solver time they stand for (by default one demo second is ten solver minutes).</summary>
public sealed record DemoAgentOptions
{
    public int Count { get; init; } = 4;

    /// <summary>The study to work on; null: the newest demo study, created when there is none.</summary>
    public int? StudyId { get; init; }

    /// <summary>Mean wall-clock seconds one simulated solve takes (scaled down from hours).</summary>
    public double MeanSolveSeconds { get; init; } = 8;

    /// <summary>Share of runs that fail with a reason (mesh, divergence, memory).</summary>
    public double FailureRate { get; init; } = 0.06;

    public double TimeScale { get; init; } = 600;

    /// <summary>Lease of each claim: short, kept alive by a heartbeat, as cluster jobs should.</summary>
    public double LeaseHours { get; init; } = 1;

    public int Seed { get; init; } = 1;
}

public sealed record DemoAgentTally(string UserName, int Done, int Failed);

public sealed record DemoAgentsReport(int StudyId, IReadOnlyList<DemoAgentTally> Agents)
{
    public int Done => Agents.Sum(a => a.Done);

    public int Failed => Agents.Sum(a => a.Failed);
}

/// <summary>
/// Simulated analysts for the demo: the admin creates an account per analyst and adds it to the study; each
/// analyst signs in with the one-time link, makes its own API token, and then works like a cluster job over the
/// HTTP API — claims a run, "solves" it with <see cref="HeatSinkEstimate"/> after a realistic, scaled-down delay
/// (with a heartbeat meanwhile), and uploads the result with an Idempotency-Key, sometimes failing a run with a
/// reason — until the study has no open run. Cancelled agents release the run they hold.
/// </summary>
/// <param name="newClient">A fresh HTTP client for the server (base address set, its own cookie jar, no automatic
/// redirects): one per analyst and one for the admin.</param>
public sealed class DemoAgents(Func<HttpClient> newClient, string adminToken, DemoAgentOptions options, Action<string> log)
{
    private static readonly JsonSerializerOptions Json = RunfoldJson.Options;

    public async Task<DemoAgentsReport> RunAsync(CancellationToken cancellationToken)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(options.Count, 1);
        using var admin = newClient();
        admin.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", adminToken);
        var studyId = await FindOrCreateStudyAsync(admin, cancellationToken);
        var analysts = new List<(string UserName, HttpClient Client)>();
        try
        {
            for (var i = 0; i < options.Count; i++)
                analysts.Add(await EnrolAsync(admin, studyId, i, cancellationToken));
            log($"{analysts.Count} simulated analysts work on study {studyId}: {string.Join(", ", analysts.Select(a => a.UserName))}.");
            var tallies = await Task.WhenAll(analysts.Select((a, i) => WorkAsync(a.UserName, a.Client, studyId, new Random(options.Seed * 7919 + i), cancellationToken)));
            return new DemoAgentsReport(studyId, tallies);
        }
        finally
        {
            foreach (var (_, client) in analysts) client.Dispose();
        }
    }

    private async Task<int> FindOrCreateStudyAsync(HttpClient admin, CancellationToken cancellationToken)
    {
        if (options.StudyId is { } id) return id;
        var studies = await ReadAsync<List<StudySummary>>(await SendAsync(admin, () => new HttpRequestMessage(HttpMethod.Get, "/api/studies"), cancellationToken), cancellationToken);
        var demo = studies.Where(s => s.Name == DemoStudy.Name && s.Counts.Open > 0).OrderByDescending(s => s.CreatedAt).FirstOrDefault();
        if (demo is not null) return demo.Id;
        var created = await ReadAsync<StudyDetail>(await SendAsync(admin, () => Post("/api/studies", DemoStudy.Request()), cancellationToken), cancellationToken);
        log($"Created the demo study ({created.Counts.Total} runs).");
        return created.Id;
    }

    /// <summary>As the admin would: an account, the study role, and the analyst's own token through its sign-in link.</summary>
    private async Task<(string UserName, HttpClient Client)> EnrolAsync(HttpClient admin, int studyId, int index, CancellationToken cancellationToken)
    {
        var agents = DemoAnalysts.Roster.Skip(DemoAnalysts.SeededCount).ToList();
        var (baseName, displayName) = agents[index % agents.Count];
        var round = index / agents.Count;
        for (var attempt = 0; ; attempt++)
        {
            var userName = round + attempt == 0 ? baseName : $"{baseName}-{round + attempt + 1}";
            var response = await SendAsync(admin, () => Post("/api/users", new CreateUserRequest(userName, displayName + " (simulated)")), cancellationToken);
            if (response.StatusCode == HttpStatusCode.BadRequest && attempt < 50)
            {
                response.Dispose();
                continue; // the name is taken: try the next
            }
            var created = await ReadAsync<UserCreated>(response, cancellationToken);
            var client = newClient();
            try
            {
                var signIn = await SendAsync(client, () => new HttpRequestMessage(HttpMethod.Get, created.SignInPath), cancellationToken);
                if ((int)signIn.StatusCode >= 400) throw new InvalidOperationException($"{userName} could not sign in with the link ({(int)signIn.StatusCode}).");
                var token = await ReadAsync<ApiTokenCreated>(await SendAsync(client, () => Post("/api/account/tokens", new TokenRequest("demo agent")), cancellationToken), cancellationToken);
                client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", token.Token);
                await ReadAsync<StudyMemberDto>(await SendAsync(admin,
                    () => new HttpRequestMessage(HttpMethod.Put, $"/api/studies/{studyId}/members/{Uri.EscapeDataString(userName)}")
                    {
                        Content = JsonContent.Create(new MemberRoleRequest(StudyRole.Analyst), options: Json),
                    }, cancellationToken), cancellationToken);
                return (userName, client);
            }
            catch
            {
                client.Dispose();
                throw;
            }
        }
    }

    private async Task<DemoAgentTally> WorkAsync(string userName, HttpClient client, int studyId, Random random, CancellationToken cancellationToken)
    {
        int done = 0, failed = 0;
        while (!cancellationToken.IsCancellationRequested)
        {
            var claimed = await ReadAsync<List<RunDto>>(await SendAsync(client,
                () => Post($"/api/studies/{studyId}/claims", new ClaimRequest(1, options.LeaseHours)), cancellationToken), cancellationToken);
            if (claimed.Count == 0) break;
            var run = claimed[0];
            var design = DemoStudy.Design(run.Factors);
            log(string.Create(CultureInfo.InvariantCulture,
                $"{userName} claimed run {run.Number}: {design.FinCount} fins, {design.FinHeight * 1000:0.#} mm high, {design.FinThickness * 1000:0.##} mm thick, {design.AirVelocity:0.##} m/s."));
            using var activity = RunfoldMetrics.Activities.StartActivity("demo.solve");
            activity?.SetTag("runfold.run", run.Number);
            try
            {
                var solveSeconds = options.MeanSolveSeconds * DemoAnalysts.RelativeCost(design) * Math.Exp(0.25 * Gaussian(random));
                var clock = Stopwatch.StartNew();
                // Half-way, the job reports it is still alive (cluster jobs heartbeat every few minutes).
                await Task.Delay(TimeSpan.FromSeconds(solveSeconds / 2), cancellationToken);
                await SendAsync(client, () => new HttpRequestMessage(HttpMethod.Post, $"/api/runs/{run.Id}/heartbeat"), cancellationToken);
                await Task.Delay(TimeSpan.FromSeconds(solveSeconds / 2), cancellationToken);
                var solverSeconds = Math.Round(clock.Elapsed.TotalSeconds * options.TimeScale);

                ResultRequest result;
                if (random.NextDouble() < options.FailureRate)
                {
                    result = new ResultRequest(RunState.Failed, new Dictionary<string, JsonElement>(), DemoAnalysts.FailureReason(random), solverSeconds);
                    failed++;
                }
                else
                {
                    var performance = HeatSinkEstimate.Evaluate(design);
                    result = new ResultRequest(RunState.Done,
                        DemoStudy.Results(performance).ToDictionary(v => v.Key, v => JsonSerializer.SerializeToElement(v.Value)),
                        DemoStudy.Note(performance), solverSeconds);
                    done++;
                }
                var key = $"demo-{userName}-{run.Id}-{Guid.NewGuid():N}"; // one key for every retry of this upload
                var receipt = await ReadAsync<ResultReceipt>(await SendAsync(client, () => new HttpRequestMessage(HttpMethod.Put, $"/api/runs/{run.Id}/result")
                {
                    Content = JsonContent.Create(result, options: Json),
                    Headers = { { "Idempotency-Key", key } },
                }, cancellationToken), cancellationToken);
                log(result.State == RunState.Done
                    ? string.Create(CultureInfo.InvariantCulture, $"{userName} uploaded run {run.Number} (revision {receipt.Revision}): {string.Join(", ", result.Values!.Select(v => $"{v.Key} {v.Value}"))}.")
                    : $"{userName} reported run {run.Number} failed: {result.Note}");
            }
            catch (OperationCanceledException) when (cancellationToken.IsCancellationRequested)
            {
                // Stopped mid-run: hand the run back rather than leave it claimed until its lease lapses.
                using var release = new CancellationTokenSource(TimeSpan.FromSeconds(10));
                try { await client.PostAsync(new Uri($"/api/runs/{run.Id}/release", UriKind.Relative), null, release.Token); }
                catch (HttpRequestException) { /* the lease lapses instead */ }
                catch (OperationCanceledException) { /* the lease lapses instead */ }
                log($"{userName} stopped and released run {run.Number}.");
                break;
            }
        }
        return new DemoAgentTally(userName, done, failed);
    }

    private static HttpRequestMessage Post<T>(string path, T body) =>
        new(HttpMethod.Post, path) { Content = JsonContent.Create(body, options: Json) };

    /// <summary>Sends with retries when the server does not answer, is busy (429, with Retry-After) or fails (5xx).</summary>
    private static async Task<HttpResponseMessage> SendAsync(HttpClient client, Func<HttpRequestMessage> request, CancellationToken cancellationToken)
    {
        for (var attempt = 1; ; attempt++)
        {
            var delay = TimeSpan.FromSeconds(Math.Min(30, 0.5 * Math.Pow(2, attempt - 1)));
            try
            {
                var response = await client.SendAsync(request(), cancellationToken);
                var status = (int)response.StatusCode;
                if (attempt >= 6 || (status != 429 && status < 500)) return response;
                if (response.Headers.RetryAfter?.Delta is { } after && after > delay) delay = after;
                response.Dispose();
            }
            catch (HttpRequestException) when (attempt < 6)
            {
                // the server is restarting or unreachable: try again
            }
            await Task.Delay(delay, cancellationToken);
        }
    }

    private static async Task<T> ReadAsync<T>(HttpResponseMessage response, CancellationToken cancellationToken)
    {
        using (response)
        {
            if (!response.IsSuccessStatusCode)
            {
                var problem = await response.Content.ReadAsStringAsync(cancellationToken);
                throw new InvalidOperationException($"{response.RequestMessage?.Method} {response.RequestMessage?.RequestUri}: {(int)response.StatusCode} {problem}");
            }
            return (await response.Content.ReadFromJsonAsync<T>(Json, cancellationToken))!;
        }
    }

    /// <summary>A standard normal draw (Box–Muller) from the agent's own seeded generator.</summary>
    private static double Gaussian(Random random) =>
        Math.Sqrt(-2 * Math.Log(1 - random.NextDouble())) * Math.Cos(2 * Math.PI * random.NextDouble());
}
