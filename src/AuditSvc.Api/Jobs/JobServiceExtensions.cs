using AuditSvc.Api.Auth;
using AuditSvc.Api.Engine;
using AuditSvc.Api.Hosting;
using Hangfire;
using Hangfire.Dashboard;
using Hangfire.PostgreSql;
using Hangfire.PostgreSql.Factories;
using Microsoft.AspNetCore.Authentication;
using Microsoft.AspNetCore.Builder;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.DependencyInjection.Extensions;
using Microsoft.Extensions.Hosting;
using Microsoft.Extensions.Logging;
using Microsoft.Extensions.Options;

namespace AuditSvc.Api.Jobs;

public static partial class JobServiceExtensions
{
    /// <summary>
    /// Hangfire over the same PostgreSQL (schema "hangfire"), the audit jobs, and, when <paramref name="runServer"/>
    /// and Workers &gt; 0, a job server with its reconciler in this process.
    /// </summary>
    public static IServiceCollection AddAuditJobs(this IServiceCollection services, ServiceOptions settings, bool runServer)
    {
        services.TryAddSingleton<IAuditEngine, ComputeEngine>();
        services.AddSingleton<AuditInputsLoader>();
        services.AddSingleton<AuditSvc.Api.Audits.ReportCache>();
        services.AddTransient<AuditJobs>();
        services.AddSingleton<DispatchWindow>();
        // The storage is this host's own singleton rather than Hangfire's process-wide JobStorage.Current, so
        // two hosts in one process (the tests; an API with a separate worker host) never cross databases.
        var storageOptions = new PostgreSqlStorageOptions
        {
            SchemaName = "hangfire",
            PrepareSchemaIfNecessary = true,
            // A long chunk stays invisible while it runs (sliding), and a dead worker's job comes back
            // after one lease; the chunk's own lease in audit_chunks guards the same thing in our tables.
            UseSlidingInvisibilityTimeout = true,
            InvisibilityTimeout = settings.Lease,
            QueuePollInterval = TimeSpan.FromSeconds(1),
        };
        services.AddSingleton<JobStorage>(_ => new PostgreSqlStorage(
            new NpgsqlConnectionFactory(settings.ConnectionString, storageOptions), storageOptions));
        // Likewise the activator: Hangfire's default hands out the process-wide JobActivator.Current, which would
        // build jobs from whichever host configured Hangfire last.
        services.AddSingleton<JobActivator>(sp => new Hangfire.AspNetCore.AspNetCoreJobActivator(sp.GetRequiredService<IServiceScopeFactory>()));
        services.AddHangfire(cfg => cfg
            .SetDataCompatibilityLevel(CompatibilityLevel.Version_180)
            .UseSimpleAssemblyNameTypeSerializer()
            .UseRecommendedSerializerSettings()
            .UseLogProvider(HangfireLogBridge.Instance));
        services.AddHostedService<HangfireLogBridge.Attach>();
        if (runServer && settings.Workers > 0)
        {
            services.AddHangfireServer(o =>
            {
                o.WorkerCount = settings.Workers;
                o.Queues = [AuditJobs.Queue, "default"];
                o.ServerName = $"{Environment.MachineName}:{Environment.ProcessId}:{Guid.NewGuid().ToString("N")[..6]}";
            });
            services.AddHostedService<Reconciler>();
        }
        return services;
    }

    /// <summary>
    /// The job dashboard at /hangfire, for operators only: a Bearer key, or a reviewer session, of a team listed in
    /// the operator teams. Being on this machine is not enough (any local process, or a proxy in front, is local).
    /// </summary>
    public static WebApplication MapJobDashboard(this WebApplication app)
    {
        var operators = app.Services.GetRequiredService<IOptions<ServiceOptions>>().Value.OperatorTeams
            .Split(',', StringSplitOptions.RemoveEmptyEntries | StringSplitOptions.TrimEntries).ToHashSet(StringComparer.Ordinal);
        app.UseHangfireDashboard("/hangfire", new DashboardOptions
        {
            AsyncAuthorization = [new OperatorFilter(operators)],
            DisplayStorageConnectionString = false,
            IsReadOnlyFunc = _ => false,
        });
        return app;
    }

    private sealed class OperatorFilter(HashSet<string> teams) : IDashboardAsyncAuthorizationFilter
    {
        public async Task<bool> AuthorizeAsync(DashboardContext context)
        {
            var http = context.GetHttpContext();
            // A key that is sent must be valid; a revoked or unknown one is refused even with a live session.
            var key = await http.AuthenticateAsync(ApiKeyHandler.SchemeName);
            if (key.Failure is not null) return false;
            var caller = key.Succeeded ? key : await http.AuthenticateAsync(AuditSvc.Api.Pages.ReviewerCookie.Scheme);
            return caller.Succeeded && teams.Contains(caller.Principal!.TeamName() ?? "");
        }
    }

    private sealed partial class Reconciler(IServiceProvider services, IOptions<ServiceOptions> options, ILogger<Reconciler> log) : BackgroundService
    {
        protected override async Task ExecuteAsync(CancellationToken stoppingToken)
        {
            var every = TimeSpan.FromSeconds(options.Value.ReconcileSeconds);
            while (!stoppingToken.IsCancellationRequested)
            {
                try
                {
                    await Task.Delay(every, stoppingToken);
                    var n = await services.GetRequiredService<AuditJobs>().ReconcileAsync(stoppingToken);
                    if (n > 0) LogRequeued(n);
                }
                catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested) { return; }
                catch (Exception e) when (e is Npgsql.NpgsqlException or TimeoutException) { LogFailed(e); }
            }
        }

        [LoggerMessage(EventId = 4101, Level = LogLevel.Information, Message = "reconciler re-enqueued {Count} jobs")]
        private partial void LogRequeued(int count);

        [LoggerMessage(EventId = 4102, Level = LogLevel.Warning, Message = "reconciler pass failed")]
        private partial void LogFailed(Exception e);
    }
}
