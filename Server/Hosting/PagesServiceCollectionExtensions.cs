using Runfold.Server.Auth;
using Runfold.Server.Runs;
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
        services.AddScoped<PageCalls>();
        services.AddScoped<IRunBoard, RunBoard>();
        services.AddScoped<IActivityFeed, ActivityPages>();
        services.AddScoped<IStudyMembership, MembershipPages>();
        services.AddScoped<IAccountService, AccountPages>();
        services.AddScoped<IStudySetup, StudySetupPages>();
        services.AddScoped<IRunProgress, RunProgressPages>();
        return services;
    }
}
