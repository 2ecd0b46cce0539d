using Microsoft.Extensions.Configuration;
using Microsoft.Extensions.DependencyInjection;

namespace AuditSvc.Api.Hosting;

public static class ServiceConfiguration
{
    // The documented short names, mapped onto the options; ASP.NET's own keys (ConnectionStrings__Audit) also work.
    private static readonly (string Env, string Key)[] Names =
    [
        ("AUDITSVC_DB", nameof(ServiceOptions.ConnectionString)),
        ("AUDITSVC_DATA", nameof(ServiceOptions.DataRoot)),
        ("AUDITSVC_CHUNK_SIZE", nameof(ServiceOptions.ChunkSize)),
        ("AUDITSVC_WORKERS", nameof(ServiceOptions.Workers)),
        ("AUDITSVC_ONNX_THREADS", nameof(ServiceOptions.OnnxThreads)),
        ("AUDITSVC_LEASE_SECONDS", nameof(ServiceOptions.LeaseSeconds)),
        ("AUDITSVC_RECONCILE_SECONDS", nameof(ServiceOptions.ReconcileSeconds)),
        ("AUDITSVC_TEAM_CHUNKS", nameof(ServiceOptions.TeamChunks)),
        ("AUDITSVC_MAX_UPLOAD_BYTES", nameof(ServiceOptions.MaxUploadBytes)),
        ("AUDITSVC_OPERATOR_TEAMS", nameof(ServiceOptions.OperatorTeams)),
        ("AUDITSVC_MIGRATE", nameof(ServiceOptions.MigrateOnStart)),
        ("AUDITSVC_RATE_PER_SECOND", nameof(ServiceOptions.RatePerSecond)),
        ("AUDITSVC_RATE_BURST", nameof(ServiceOptions.RateBurst)),
        ("AUDITSVC_WRITES_PER_MINUTE", nameof(ServiceOptions.WritesPerMinute)),
    ];

    public static IReadOnlyList<string> EnvironmentNames => Names.Select(n => n.Env).ToList();

    /// <summary>Binds <see cref="ServiceOptions"/> and validates it when the host starts.</summary>
    public static IServiceCollection AddServiceOptions(this IServiceCollection services, IConfiguration config)
    {
        services.AddOptions<ServiceOptions>()
            .Configure(o => Bind(config, o))
            .ValidateDataAnnotations() // also runs ServiceOptions.Validate (IValidatableObject)
            .ValidateOnStart();
        return services;
    }

    public static ServiceOptions Read(IConfiguration config)
    {
        var o = new ServiceOptions();
        Bind(config, o);
        return o;
    }

    private static void Bind(IConfiguration config, ServiceOptions o)
    {
        o.ConnectionString = config.GetConnectionString("Audit") ?? o.ConnectionString;
        config.GetSection("AuditSvc").Bind(o);
        var overrides = Names.Where(n => !string.IsNullOrEmpty(config[n.Env]))
            .ToDictionary(n => n.Key, n => config[n.Env]);
        new ConfigurationBuilder().AddInMemoryCollection(overrides).Build().Bind(o);
    }
}
