using AuditSvc.Core;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Diagnostics;
using Microsoft.AspNetCore.Http;
using Microsoft.AspNetCore.Http.Features;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Options;

namespace AuditSvc.Api.Hosting;

/// <summary>Every error leaves as RFC 9457 problem details; bad input names its field (or file, or row).</summary>
public static class ProblemHandling
{
    public static IServiceCollection AddAuditProblems(this IServiceCollection services) =>
        services.AddProblemDetails(o => o.CustomizeProblemDetails = HideServerPaths).AddExceptionHandler<InputExceptionHandler>();

    public static WebApplication UseAuditProblems(this WebApplication app)
    {
        app.UseExceptionHandler();
        app.UseStatusCodePages();
        return app;
    }

    /// <summary>A 400 naming the field, in the same shape as the framework's validation problems.</summary>
    public static IResult Field(string field, string message) =>
        TypedResults.ValidationProblem(new Dictionary<string, string[]> { [field] = [message] },
            title: $"{field}: {message}");

    /// <summary>404 for an audit that is missing or another team's: both answer alike, so ids cannot be probed.</summary>
    public static ProblemHttpResult AuditNotFound(Guid id) => TypedResults.Problem(statusCode: 404, title: $"no audit {id} for this team");

    // Problems go to callers on other machines: where the artifact root, the temporary folder and the binaries
    // live is the server's business. Paths under the root become relative to it (what a caller can act on).
    private static void HideServerPaths(ProblemDetailsContext ctx)
    {
        var root = ctx.HttpContext.RequestServices.GetService<IOptions<ServiceOptions>>()?.Value.DataRoot;
        var places = new List<(string Path, string Shown)>();
        foreach (var (path, shown) in new[] { (root, "<artifact root>"), (Path.GetTempPath(), "<temp>"), (AppContext.BaseDirectory, "<service>") })
        {
            var trimmed = path?.TrimEnd(Path.DirectorySeparatorChar);
            if (string.IsNullOrEmpty(trimmed) || trimmed.Length < 2) continue;
            places.Add((trimmed + Path.DirectorySeparatorChar, shown == "<artifact root>" ? "" : shown + Path.DirectorySeparatorChar));
            places.Add((trimmed, shown));
        }
        string Hide(string? text)
        {
            if (string.IsNullOrEmpty(text)) return text ?? "";
            foreach (var (path, shown) in places) text = text.Replace(path, shown, StringComparison.Ordinal);
            return text;
        }
        var p = ctx.ProblemDetails;
        p.Title = p.Title is null ? null : Hide(p.Title);
        p.Detail = p.Detail is null ? null : Hide(p.Detail);
        if (p is HttpValidationProblemDetails v)
        {
            var errors = v.Errors.ToDictionary(e => Hide(e.Key), e => e.Value.Select(Hide).ToArray());
            v.Errors.Clear();
            foreach (var (k, e) in errors) v.Errors[k] = e;
        }
        foreach (var key in p.Extensions.Keys.ToList())
        {
            p.Extensions[key] = p.Extensions[key] switch
            {
                string text => Hide(text),
                IDictionary<string, string[]> errors => errors.ToDictionary(e => Hide(e.Key), e => e.Value.Select(Hide).ToArray()),
                var other => other,
            };
        }
    }

    /// <summary>PostgreSQL unreachable, shutting down or starting up, anywhere in the chain (Hangfire wraps its own).</summary>
    public static bool DatabaseUnavailable(Exception? e)
    {
        for (; e is not null; e = e.InnerException)
        {
            if (e is Npgsql.PostgresException pg)
                return pg.SqlState.StartsWith("08", StringComparison.Ordinal) || pg.SqlState.StartsWith("57P", StringComparison.Ordinal)
                    || pg.SqlState.StartsWith("53", StringComparison.Ordinal);
            if (e is Npgsql.NpgsqlException { IsTransient: true }) return true;
        }
        return false;
    }

    private sealed class InputExceptionHandler(IProblemDetailsService problems) : IExceptionHandler
    {
        public async ValueTask<bool> TryHandleAsync(HttpContext http, Exception exception, CancellationToken cancellationToken)
        {
            if (DatabaseUnavailable(exception))
            {
                // The database is down or restarting: a state to wait out, not a bug. Idle pooled connections are
                // dead after a restart, so drop them now rather than let each fail one more request.
                http.RequestServices.GetService<Npgsql.NpgsqlDataSource>()?.Clear();
                Npgsql.NpgsqlConnection.ClearAllPools();
                http.Response.StatusCode = 503;
                http.Response.Headers.RetryAfter = "5";
                return await problems.TryWriteAsync(new ProblemDetailsContext
                {
                    HttpContext = http,
                    Exception = exception,
                    ProblemDetails = { Status = 503, Title = "the database is unavailable; try again shortly" },
                });
            }
            if (DiskFull.Is(exception))
            {
                // 507 Insufficient Storage (RFC 4918): the request was fine, the server has no room; whatever the
                // request had written is already removed by the code that wrote it.
                http.Response.StatusCode = StatusCodes.Status507InsufficientStorage;
                http.Response.Headers.RetryAfter = "60";
                return await problems.TryWriteAsync(new ProblemDetailsContext
                {
                    HttpContext = http,
                    Exception = exception,
                    ProblemDetails =
                    {
                        Status = StatusCodes.Status507InsufficientStorage,
                        Title = "the service's disk is full: nothing of this request was kept; retry later, or ask the operator to free space under the artifact root",
                    },
                });
            }
            var (status, title, field) = exception switch
            {
                AuditInputException e => (400, e.Message, e.Subject),
                BadHttpRequestException e => (e.StatusCode, e.Message, (string?)null),
                NotSupportedException e => (501, e.Message, null),
                _ => (0, "", null),
            };
            if (status == 0) return false;
            http.Response.StatusCode = status;
            var ctx = new ProblemDetailsContext
            {
                HttpContext = http,
                Exception = exception,
                ProblemDetails = { Status = status, Title = title },
            };
            if (field is not null)
            {
                ctx.ProblemDetails.Extensions["field"] = field;
                ctx.ProblemDetails.Extensions["errors"] = new Dictionary<string, string[]> { [field] = [exception.Message] };
            }
            return await problems.TryWriteAsync(ctx);
        }
    }
}
