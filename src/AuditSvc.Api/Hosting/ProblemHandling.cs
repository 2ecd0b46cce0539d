using AuditSvc.Core;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Diagnostics;
using Microsoft.AspNetCore.Http;
using Microsoft.AspNetCore.Http.Features;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.Extensions.DependencyInjection;

namespace AuditSvc.Api.Hosting;

/// <summary>Every error leaves as RFC 9457 problem details; bad input names its field (or file, or row).</summary>
public static class ProblemHandling
{
    public static IServiceCollection AddAuditProblems(this IServiceCollection services) =>
        services.AddProblemDetails().AddExceptionHandler<InputExceptionHandler>();

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

    private sealed class InputExceptionHandler(IProblemDetailsService problems) : IExceptionHandler
    {
        public async ValueTask<bool> TryHandleAsync(HttpContext http, Exception exception, CancellationToken cancellationToken)
        {
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
