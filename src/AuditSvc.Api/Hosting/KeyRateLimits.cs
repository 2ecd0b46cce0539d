using System.Globalization;
using System.Security.Claims;
using System.Threading.RateLimiting;
using AuditSvc.Api.Pages;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Http;
using Microsoft.AspNetCore.RateLimiting;
using Microsoft.Extensions.DependencyInjection;

namespace AuditSvc.Api.Hosting;

/// <summary>
/// Per-key rate limits with ASP.NET Core's rate limiter: on /api a token bucket per API key for reads, and a smaller
/// one per key for uploads and submissions (POST); on the /ui pages the same two buckets per signed-in session's key
/// (apart from its /api buckets, so a reviewer's clicks never eat a pipeline's budget), and per client address for
/// the sign-in page. Past them: 429 with Retry-After, as a problem document on /api and a short page on /ui.
/// One key's flood does not slow another key.
/// </summary>
public static class KeyRateLimits
{
    public const string Policy = "per-key";

    /// <summary>The /ui pages' policy: per session key, else per client address.</summary>
    public const string PagePolicy = "per-session";

    public static IServiceCollection AddKeyRateLimits(this IServiceCollection services, ServiceOptions settings) =>
        services.AddRateLimiter(o =>
        {
            o.RejectionStatusCode = StatusCodes.Status429TooManyRequests;
            o.AddPolicy(Policy, http =>
            {
                var key = http.User.FindFirstValue(ClaimTypes.NameIdentifier);
                if (key is null) return RateLimitPartition.GetNoLimiter("anonymous"); // refused by authorisation anyway
                return Bucket(http, "api:" + key, settings);
            });
            o.AddPolicy(PagePolicy, http =>
            {
                // A session carries its key's id. The sign-in page has no session yet: one bucket per client address
                // at the read rate for its form too (many people may sign in from one office address at once).
                var key = http.User.FindFirstValue(ClaimTypes.NameIdentifier);
                if (key is not null) return Bucket(http, "ui:" + key, settings);
                return ReadBucket("ui-ip:" + (http.Connection.RemoteIpAddress?.ToString() ?? "unknown"), settings);
            });
            o.OnRejected = async (ctx, ct) =>
            {
                var http = ctx.HttpContext;
                var seconds = ctx.Lease.TryGetMetadata(MetadataName.RetryAfter, out var after) ? Math.Max(1, (int)Math.Ceiling(after.TotalSeconds)) : 1;
                http.Response.Headers.RetryAfter = seconds.ToString(CultureInfo.InvariantCulture);
                if (http.Request.Path.StartsWithSegments("/ui"))
                {
                    await PageHtml.Message(http, StatusCodes.Status429TooManyRequests, "Too many requests",
                        $"This session sent more requests than the service allows. Wait {seconds} s, then reload the page.").ExecuteAsync(http);
                    return;
                }
                await TypedResults.Problem(statusCode: 429, title: $"too many requests for this API key: retry after {seconds} s")
                    .ExecuteAsync(http);
            };
        });

    // Reads (GET, HEAD) and writes (everything else) have buckets of their own.
    private static RateLimitPartition<string> Bucket(HttpContext http, string who, ServiceOptions settings) =>
        HttpMethods.IsGet(http.Request.Method) || HttpMethods.IsHead(http.Request.Method)
            ? ReadBucket(who, settings)
            : RateLimitPartition.GetTokenBucketLimiter("w:" + who, _ => new TokenBucketRateLimiterOptions
            {
                TokenLimit = Math.Max(1, settings.WritesPerMinute / 4), TokensPerPeriod = settings.WritesPerMinute,
                ReplenishmentPeriod = TimeSpan.FromMinutes(1), QueueLimit = 0, AutoReplenishment = true,
            });

    private static RateLimitPartition<string> ReadBucket(string who, ServiceOptions settings) =>
        RateLimitPartition.GetTokenBucketLimiter("r:" + who, _ => new TokenBucketRateLimiterOptions
        {
            TokenLimit = settings.RateBurst, TokensPerPeriod = settings.RatePerSecond,
            ReplenishmentPeriod = TimeSpan.FromSeconds(1), QueueLimit = 0, AutoReplenishment = true,
        });
}
