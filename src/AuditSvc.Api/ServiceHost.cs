using AuditSvc.Api.Audits;
using AuditSvc.Api.Auth;
using AuditSvc.Api.Hosting;
using AuditSvc.Api.ImageSets;
using AuditSvc.Api.Jobs;
using AuditSvc.Api.Models;
using AuditSvc.Api.Pages;
using AuditSvc.Core;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Http;
using Microsoft.Extensions.Configuration;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Hosting;
using Npgsql;

namespace AuditSvc.Api;

/// <summary>The two service hosts: the web API (with its own job workers) and a job worker without the web part.</summary>
public static class ServiceHost
{
    /// <param name="configure">Runs before the service's registrations: add configuration, or an engine of your own.</param>
    public static WebApplication BuildApi(string[] args, Action<WebApplicationBuilder>? configure = null)
    {
        var builder = WebApplication.CreateBuilder(args);
        configure?.Invoke(builder);
        var settings = CheckedSettings(builder.Configuration);
        builder.Services
            .AddServiceOptions(builder.Configuration)
            .AddAuditData()
            .AddAuditJobs(settings, runServer: true)
            .AddApiKeyAuth()
            .AddReviewPages(settings)
            .AddAuditProblems()
            .AddKeyRateLimits(settings)
            .AddOpenApi();
        builder.WebHost.ConfigureKestrel(k => k.Limits.MaxRequestBodySize = settings.MaxUploadBytes);

        var app = builder.Build();
        app.UseAuditProblems();
        app.UseAuthentication();
        app.UseAuthorization();
        app.UseRateLimiter();
        app.MapOpenApi();
        app.MapGet("/health", HealthAsync).AllowAnonymous().ExcludeFromDescription();
        app.MapGroup("/api").RequireAuthorization("team").RequireRateLimiting(KeyRateLimits.Policy)
            .MapModels()
            .MapImageSets()
            .MapAudits()
            .MapReviews();
        app.MapReviewPages();
        app.MapJobDashboard();
        return app;
    }

    public static IHost BuildWorker(string[] args, Action<HostApplicationBuilder>? configure = null)
    {
        var builder = Host.CreateApplicationBuilder(args);
        configure?.Invoke(builder);
        var settings = CheckedSettings(builder.Configuration);
        if (settings.Workers == 0) throw new AuditInputException("AUDITSVC_WORKERS", "is 0: a worker with no job threads would do nothing");
        builder.Services
            .AddServiceOptions(builder.Configuration)
            .AddAuditData()
            .AddAuditJobs(settings, runServer: true);
        return builder.Build();
    }

    // Read and checked here as well as by ValidateOnStart: Hangfire's storage is built while the app is
    // put together, and a missing connection string should fail with our message, not a driver's.
    private static ServiceOptions CheckedSettings(IConfiguration config)
    {
        var settings = ServiceConfiguration.Read(config);
        var context = new System.ComponentModel.DataAnnotations.ValidationContext(settings);
        var errors = new List<System.ComponentModel.DataAnnotations.ValidationResult>();
        if (!System.ComponentModel.DataAnnotations.Validator.TryValidateObject(settings, context, errors, validateAllProperties: true))
        {
            var first = errors[0];
            throw new AuditInputException(first.MemberNames.FirstOrDefault() ?? "settings", first.ErrorMessage ?? "invalid");
        }
        return settings;
    }

    private static async Task<IResult> HealthAsync(NpgsqlDataSource db, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        await using var cmd = new NpgsqlCommand("SELECT 1", conn);
        await cmd.ExecuteScalarAsync(ct);
        return TypedResults.Ok(new { status = "ok" });
    }
}
