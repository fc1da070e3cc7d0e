using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.DependencyInjection.Extensions;
using Microsoft.Extensions.Hosting;
using Microsoft.Extensions.Time.Testing;
using Runfold.Server.Runs;

namespace Runfold.Server.Tests.Infrastructure;

/// <summary>A fake clock for the server, without the background lease sweep, so a test advances time and calls
/// the sweep itself — no sleeping, no race with a timer.</summary>
public static class FakeClock
{
    public static Action<IServiceCollection> Install(FakeTimeProvider clock) => services =>
    {
        services.Replace(ServiceDescriptor.Singleton<TimeProvider>(clock));
        services.Remove(services.Single(d => d.ServiceType == typeof(IHostedService) && d.ImplementationType == typeof(LeaseSweepService)));
    };
}
