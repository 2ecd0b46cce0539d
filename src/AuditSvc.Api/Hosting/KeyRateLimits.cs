using System.Globalization;
using System.Security.Claims;
using System.Threading.RateLimiting;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Http;
using Microsoft.AspNetCore.RateLimiting;
using Microsoft.Extensions.DependencyInjection;

namespace AuditSvc.Api.Hosting;

/// <summary>
/// Per-key rate limits on /api with ASP.NET Core's rate limiter: a token bucket per API key for reads, and a
/// smaller one per key for uploads and submissions (POST). Past them: 429 with Retry-After, as a problem document.
/// One key's flood does not slow another key.
/// </summary>
public static class KeyRateLimits
{
    public const string Policy = "per-key";

    public static IServiceCollection AddKeyRateLimits(this IServiceCollection services, ServiceOptions settings) =>
        services.AddRateLimiter(o =>
        {
            o.RejectionStatusCode = StatusCodes.Status429TooManyRequests;
            o.AddPolicy(Policy, http =>
            {
                var key = http.User.FindFirstValue(ClaimTypes.NameIdentifier);
                if (key is null) return RateLimitPartition.GetNoLimiter("anonymous"); // refused by authorisation anyway
                return HttpMethods.IsGet(http.Request.Method) || HttpMethods.IsHead(http.Request.Method)
                    ? RateLimitPartition.GetTokenBucketLimiter("r:" + key, _ => new TokenBucketRateLimiterOptions
                    {
                        TokenLimit = settings.RateBurst, TokensPerPeriod = settings.RatePerSecond,
                        ReplenishmentPeriod = TimeSpan.FromSeconds(1), QueueLimit = 0, AutoReplenishment = true,
                    })
                    : RateLimitPartition.GetTokenBucketLimiter("w:" + key, _ => new TokenBucketRateLimiterOptions
                    {
                        TokenLimit = Math.Max(1, settings.WritesPerMinute / 4), TokensPerPeriod = settings.WritesPerMinute,
                        ReplenishmentPeriod = TimeSpan.FromMinutes(1), QueueLimit = 0, AutoReplenishment = true,
                    });
            });
            o.OnRejected = async (ctx, ct) =>
            {
                var seconds = ctx.Lease.TryGetMetadata(MetadataName.RetryAfter, out var after) ? Math.Max(1, (int)Math.Ceiling(after.TotalSeconds)) : 1;
                ctx.HttpContext.Response.Headers.RetryAfter = seconds.ToString(CultureInfo.InvariantCulture);
                await TypedResults.Problem(statusCode: 429, title: $"too many requests for this API key: retry after {seconds} s")
                    .ExecuteAsync(ctx.HttpContext);
            };
        });
}
