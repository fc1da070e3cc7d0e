using System.Net;
using Runfold.Server.Tests.Infrastructure;

namespace Runfold.Server.Tests;

public sealed class HealthWithoutDatabaseTests
{
    [Fact]
    public async Task Health_turns_503_when_the_PostgreSQL_database_goes_away()
    {
        await using var app = await RunfoldApp.StartAsync();
        using var client = app.ClientWithToken(null);
        Assert.Equal(HttpStatusCode.OK, (await client.GetAsync("/health")).StatusCode);

        await TestDatabases.DropPostgresAsync(app.PostgresConnectionString!);

        var response = await client.GetAsync("/health");
        Assert.Equal(HttpStatusCode.ServiceUnavailable, response.StatusCode);
        Assert.Contains("unhealthy", await response.Content.ReadAsStringAsync(), StringComparison.Ordinal);
    }
}
