using System.Security.Claims;
using System.Text.Encodings.Web;
using AuditSvc.Data.Teams;
using Microsoft.AspNetCore.Authentication;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Http;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Logging;
using Microsoft.Extensions.Options;

namespace AuditSvc.Api.Auth;

/// <summary><c>Authorization: Bearer &lt;key&gt;</c>; a valid key signs the request in as its team.</summary>
public sealed class ApiKeyHandler(IOptionsMonitor<AuthenticationSchemeOptions> options, ILoggerFactory logger,
    UrlEncoder encoder, ApiKeyStore keys) : AuthenticationHandler<AuthenticationSchemeOptions>(options, logger, encoder)
{
    public const string SchemeName = "ApiKey";
    public const string TeamIdClaim = "auditsvc:team_id";
    public const string TeamNameClaim = "auditsvc:team";

    protected override async Task<AuthenticateResult> HandleAuthenticateAsync()
    {
        var header = Request.Headers.Authorization.ToString();
        if (string.IsNullOrEmpty(header)) return AuthenticateResult.NoResult();
        if (!header.StartsWith("Bearer ", StringComparison.OrdinalIgnoreCase))
            return AuthenticateResult.Fail("Authorization header must be 'Bearer <key>'");
        var caller = await keys.VerifyAsync(header["Bearer ".Length..].Trim(), Context.RequestAborted);
        if (caller is null) return AuthenticateResult.Fail("unknown or revoked API key");
        var identity = new ClaimsIdentity(
            [new Claim(TeamIdClaim, caller.TeamId.ToString()), new Claim(TeamNameClaim, caller.TeamName),
             new Claim(ClaimTypes.NameIdentifier, caller.KeyId.ToString())], SchemeName);
        return AuthenticateResult.Success(new AuthenticationTicket(new ClaimsPrincipal(identity), SchemeName));
    }

    protected override Task HandleChallengeAsync(AuthenticationProperties properties)
    {
        Response.StatusCode = StatusCodes.Status401Unauthorized;
        Response.Headers.WWWAuthenticate = "Bearer";
        return Results.Problem(statusCode: 401, title: "Unauthorized",
            detail: "Send an API key as 'Authorization: Bearer <key>' (create one with 'auditsvc keys create').",
            extensions: new Dictionary<string, object?> { ["field"] = "Authorization" }).ExecuteAsync(Context);
    }
}

public static class ApiKeyAuthExtensions
{
    public static IServiceCollection AddApiKeyAuth(this IServiceCollection services)
    {
        services.AddAuthentication(ApiKeyHandler.SchemeName)
            .AddScheme<AuthenticationSchemeOptions, ApiKeyHandler>(ApiKeyHandler.SchemeName, null);
        services.AddAuthorizationBuilder()
            .SetFallbackPolicy(null)
            .AddPolicy("team", p => p.RequireAuthenticatedUser().RequireClaim(ApiKeyHandler.TeamIdClaim));
        return services;
    }

    /// <summary>The caller's team; every store call of an endpoint is scoped by it.</summary>
    public static Guid TeamId(this ClaimsPrincipal user) =>
        Guid.Parse(user.FindFirstValue(ApiKeyHandler.TeamIdClaim) ?? throw new InvalidOperationException("no team on this request"));

    public static string? TeamName(this ClaimsPrincipal user) => user.FindFirstValue(ApiKeyHandler.TeamNameClaim);

    /// <summary>
    /// The API key behind the request: the Bearer key, or the key the browser session was opened with. Reviews are
    /// signed with it; nothing in a request body can name someone else.
    /// </summary>
    public static Guid KeyId(this ClaimsPrincipal user) =>
        Guid.Parse(user.FindFirstValue(ClaimTypes.NameIdentifier) ?? throw new InvalidOperationException("no API key on this request"));
}
