using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Hosting;

public static class PagesServiceCollectionExtensions
{
    /// <summary>Blazor with interactive server rendering, and the services the Client pages talk to.</summary>
    public static IServiceCollection AddRunfoldPages(this IServiceCollection services)
    {
        services.AddRazorComponents().AddInteractiveServerComponents();
        services.AddScoped<IStudyCatalog, StudyCatalog>();
        return services;
    }
}
