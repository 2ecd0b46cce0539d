using System.Net.Http;
using System.Net.Sockets;
using Npgsql;

namespace AuditSvc.Cli.Commands;

/// <summary>
/// Failures of the machine around auditsvc (a server that does not answer, a database that refuses or is
/// missing, a full disk) are not bugs: each gets one line naming what failed and what to do, and exit 2.
/// Messages name hosts, ports and databases, never a connection string (it may hold a password).
/// </summary>
public static class EnvironmentErrors
{
    /// <summary>The one-line explanation of an environment failure, or null when <paramref name="e"/> is something else.</summary>
    public static string? Explain(Exception e)
    {
        for (var x = e; x is not null; x = x.InnerException)
        {
            switch (x)
            {
                case PostgresException pg:
                    return Postgres(pg); // null for SQL errors that are bugs (syntax, constraints …): exit 3
                case NpgsqlException np when Find<SocketException>(np) is { } s:
                    return $"cannot reach PostgreSQL ({FirstLine(np.Message)}: {s.Message}): start it, or point AUDITSVC_DB / --db at a running server";
                case NpgsqlException np when Find<TimeoutException>(np) is not null:
                    return "PostgreSQL did not answer in time: check that it runs and is reachable, or raise Timeout in the connection string";
                case NpgsqlException np:
                    return $"PostgreSQL refused the connection ({FirstLine(np.Message)}): check AUDITSVC_DB / --db";
                case HttpRequestException h:
                    return $"cannot reach the service ({FirstLine(h.Message)}): check --server and that the service runs";
                case TaskCanceledException t when t.InnerException is TimeoutException:
                    return "the service did not answer in time: check --server and the service's health (GET /health)";
                case IOException io when Core.DiskFull.Is(io):
                    return $"the disk is full ({FirstLine(io.Message)}): free space or choose another --out";
            }
        }
        return null;
    }

    private static string? Postgres(PostgresException pg) => pg.SqlState switch
    {
        // Class 28: invalid authorisation; 3D000: invalid catalog name; 42501: insufficient privilege.
        "28P01" or "28000" => $"PostgreSQL refused the login ({pg.MessageText}): check the user and password in AUDITSVC_DB / --db",
        "3D000" => $"{pg.MessageText}: run `auditsvc migrate` (it creates the database), or fix Database= in AUDITSVC_DB / --db",
        "42501" => $"PostgreSQL refused an operation ({pg.MessageText}): the user needs rights on the database (and CREATEDB for `migrate` to create it)",
        "53100" => $"PostgreSQL's disk is full ({pg.MessageText}): free space on the database server",
        "57P03" or "57P01" or "53300" => $"PostgreSQL is not accepting connections now ({pg.MessageText}): retry when it is up",
        // Classes 08 (connection), 53 (resources), 57 (operator intervention), 58 (system): the server's state, not ours.
        var state when state[..2] is "08" or "53" or "57" or "58" => $"PostgreSQL answered {pg.SqlState} ({pg.MessageText}): check the server and retry",
        _ => null,
    };

    private static T? Find<T>(Exception e) where T : Exception
    {
        for (var x = e.InnerException; x is not null; x = x.InnerException) if (x is T t) return t;
        return null;
    }

    private static string FirstLine(string s) => s.Split('\n')[0].Trim();
}
