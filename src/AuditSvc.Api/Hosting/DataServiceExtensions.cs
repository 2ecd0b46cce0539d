using AuditSvc.Api.Artifacts;
using AuditSvc.Data;
using AuditSvc.Data.Artifacts;
using AuditSvc.Data.Audits;
using AuditSvc.Data.ImageSets;
using AuditSvc.Data.Migrations;
using AuditSvc.Data.Models;
using AuditSvc.Data.Teams;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Hosting;
using Microsoft.Extensions.Options;

namespace AuditSvc.Api.Hosting;

public static class DataServiceExtensions
{
    /// <summary>One data source for the process, the stores over it, the artifact root, and migration at start.</summary>
    public static IServiceCollection AddAuditData(this IServiceCollection services)
    {
        services.AddSingleton(sp => AuditDataSource.Create(sp.GetRequiredService<IOptions<ServiceOptions>>().Value.ConnectionString));
        services.AddSingleton<MigrationRunner>(sp => new MigrationRunner(sp.GetRequiredService<Npgsql.NpgsqlDataSource>()));
        services.AddSingleton<TeamStore>();
        services.AddSingleton<ApiKeyStore>();
        services.AddSingleton<ModelStore>();
        services.AddSingleton<ImageSetStore>();
        services.AddSingleton<AuditStore>();
        services.AddSingleton<ChunkStore>();
        services.AddSingleton<ReviewStore>();
        services.AddSingleton<ContentLocks>();
        services.AddSingleton<ScratchSpace>();
        services.AddSingleton<ArtifactStore>();
        services.AddSingleton<StoredOrphans>();
        services.AddHostedService<MigrateOnStart>();
        services.AddHostedService<ScratchSweeper>();
        services.AddHostedService<OrphanSweeper>();
        return services;
    }

    /// <summary>Runs before the job server and the web server start (hosted services start in order).</summary>
    private sealed class MigrateOnStart(MigrationRunner runner, IOptions<ServiceOptions> options) : IHostedService
    {
        public async Task StartAsync(CancellationToken cancellationToken)
        {
            Directory.CreateDirectory(options.Value.DataRoot);
            if (options.Value.MigrateOnStart) await runner.ApplyAsync(cancellationToken);
        }

        public Task StopAsync(CancellationToken cancellationToken) => Task.CompletedTask;
    }
}
