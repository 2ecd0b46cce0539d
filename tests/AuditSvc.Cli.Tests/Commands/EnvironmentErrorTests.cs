using System.Net;
using System.Net.Sockets;
using System.Text;
using AuditSvc.Data.Tests;
using Npgsql;

namespace AuditSvc.Cli.Tests.Commands;

/// <summary>
/// Failures of the environment (a server or database that is not there or refuses) and plain bad input are
/// one line naming what failed, exit 2, and no stack trace unless --verbose; exit 3 stays for bugs.
/// </summary>
public class EnvironmentErrorTests
{
    private const string Audit = "00000000-0000-0000-0000-000000000001";

    // Port 1 on loopback: nothing listens there on a test machine, so a connection is refused at once.
    private const string RefusingDb = "Host=127.0.0.1;Port=1;Username=auditsvc;Password=secret-pw;Database=auditsvc;Timeout=5";

    private static void AssertOneLine(int status, string stderr, params string[] expected)
    {
        Assert.True(status == 2, $"status {status}: {stderr}");
        foreach (var e in expected) Assert.Contains(e, stderr);
        Assert.DoesNotContain("   at ", stderr);
        Assert.DoesNotContain("internal error", stderr);
        Assert.Single(stderr.Split('\n', StringSplitOptions.RemoveEmptyEntries), l => l.StartsWith("error:", StringComparison.Ordinal));
    }

    [Fact]
    public void Gate_UnreachableServer_ExitsTwoWithOneLine()
    {
        var (status, _, stderr) = CliProcess.Run("gate", "--server", "http://127.0.0.1:1", "--audit", Audit, "--key", "k");
        AssertOneLine(status, stderr, "cannot reach the service", "--server");
    }

    [Fact]
    public void Gate_UnreachableServerWithVerbose_ShowsTheTrace()
    {
        var (status, _, stderr) = CliProcess.Run("gate", "--server", "http://127.0.0.1:1", "--audit", Audit, "--key", "k", "--verbose");
        Assert.Equal(2, status);
        Assert.Contains("   at ", stderr);
    }

    [Theory]
    [InlineData(401, "refused the API key")]
    [InlineData(403, "does not let this API key")]
    [InlineData(500, "answered 500")]
    [InlineData(503, "answered 503")]
    public void Gate_ServerAnswersAnError_ExitsTwoNamingIt(int code, string expected)
    {
        using var server = new CannedHttpServer(code);
        var (status, _, stderr) = CliProcess.Run("gate", "--server", server.Url, "--audit", Audit, "--key", "wrong-key");
        AssertOneLine(status, stderr, expected);
        Assert.DoesNotContain("wrong-key", stderr);
    }

    [Theory]
    [InlineData("migrate")]
    [InlineData("keys")]
    public void DbCommand_RefusingPostgres_ExitsTwoWithOneLine(string command)
    {
        string[] args = command == "keys" ? ["keys", "list", "--db", RefusingDb] : [command, "--db", RefusingDb];
        var (status, _, stderr) = CliProcess.Run(args);
        AssertOneLine(status, stderr, "cannot reach PostgreSQL", "127.0.0.1:1");
        Assert.DoesNotContain("secret-pw", stderr);
    }

    [Theory]
    [InlineData("serve")]
    [InlineData("worker")]
    public void Host_RefusingPostgres_ExitsTwoWithOneLine(string command)
    {
        var env = new Dictionary<string, string?> { ["AUDITSVC_DB"] = RefusingDb, ["AUDITSVC_DATA"] = CliProcess.TempDir("envdata") };
        string[] args = command == "serve" ? ["serve", "--urls", "http://127.0.0.1:0"] : ["worker"];
        var (status, _, stderr) = CliProcess.RunWith(env, args);
        AssertOneLine(status, stderr, "cannot reach PostgreSQL");
        Assert.DoesNotContain("secret-pw", stderr);
    }

    [Theory]
    [InlineData("migrate")]
    [InlineData("worker")]
    public void Command_MalformedConnectionString_ExitsTwoWithoutEchoingIt(string command)
    {
        const string bad = "Host=x;;=Password=hunter2 garbage";
        var env = new Dictionary<string, string?> { ["AUDITSVC_DB"] = bad, ["AUDITSVC_DATA"] = CliProcess.TempDir("envdata") };
        var (status, _, stderr) = CliProcess.RunWith(env, command);
        AssertOneLine(status, stderr, "not a valid PostgreSQL connection string");
        Assert.DoesNotContain("hunter2", stderr);
    }

    [PgFact]
    public async Task Migrate_MissingDatabase_CreatesItAndApplies()
    {
        var name = "t_" + Guid.NewGuid().ToString("N");
        var cs = new NpgsqlConnectionStringBuilder(TestDatabase.AdminConnectionString) { Database = name }.ConnectionString;
        try
        {
            var (status, stdout, stderr) = CliProcess.Run("migrate", "--db", cs);
            Assert.True(status == 0, stderr);
            Assert.Contains($"created database {name}", stdout);
            Assert.Contains("applied 0001", stdout);
            var again = CliProcess.Run("migrate", "--db", cs);
            Assert.Equal(0, again.Status);
            Assert.Contains("schema up to date", again.Out);
        }
        finally
        {
            await using var conn = new NpgsqlConnection(TestDatabase.AdminConnectionString);
            await conn.OpenAsync();
            await using var drop = new NpgsqlCommand($"DROP DATABASE IF EXISTS {name} WITH (FORCE)", conn);
            await drop.ExecuteNonQueryAsync();
        }
    }

    [PgFact]
    public void Worker_MissingDatabase_SaysToRunMigrate()
    {
        var cs = new NpgsqlConnectionStringBuilder(TestDatabase.AdminConnectionString) { Database = "t_missing_" + Guid.NewGuid().ToString("N")[..8] }.ConnectionString;
        var env = new Dictionary<string, string?> { ["AUDITSVC_DB"] = cs, ["AUDITSVC_DATA"] = CliProcess.TempDir("envdata") };
        var (status, _, stderr) = CliProcess.RunWith(env, "worker");
        AssertOneLine(status, stderr, "does not exist", "auditsvc migrate");
    }

    [PgFact]
    public void Migrate_UnknownRole_ExitsTwoNamingTheLogin()
    {
        var cs = new NpgsqlConnectionStringBuilder(TestDatabase.AdminConnectionString) { Username = "no_such_role_" + Guid.NewGuid().ToString("N")[..8] }.ConnectionString;
        var (status, _, stderr) = CliProcess.Run("migrate", "--db", cs);
        AssertOneLine(status, stderr, "refused the login");
    }

    [Fact]
    public void Compare_EmptyObject_ExitsTwoNamingTheMissingMember()
    {
        var dir = CliProcess.TempDir("cmpempty");
        var empty = Path.Combine(dir, "empty.json");
        File.WriteAllText(empty, "{}");
        var (status, _, stderr) = CliProcess.Run("compare", empty, empty);
        AssertOneLine(status, stderr, empty, "schema_version");
    }

    [Fact]
    public void Audit_OutNamesAFile_ExitsTwoBeforeWork()
    {
        var dir = CliProcess.TempDir("outfile");
        var file = Path.Combine(dir, "taken");
        File.WriteAllText(file, "x");
        var (status, _, stderr) = CliProcess.Run("audit", "--model", "m.onnx", "--data", "d.csv", "--out", file);
        Assert.Equal(2, status);
        Assert.Contains($"'{file}' is a file", stderr);
        Assert.Equal("x", File.ReadAllText(file));
    }

    [Fact]
    public void Audit_DuplicateClassNames_ExitsTwoNamingTheName()
    {
        var dir = CliProcess.TempDir("duplabels");
        var manifest = AuditSvc.Cli.Demo.DemoSetGenerator.Write(dir, new AuditSvc.Cli.Demo.DemoSetOptions(12, AuditSvc.Cli.Commands.DemoCommand.DemoAgreement, 5));
        var model = AuditSvc.Cli.Commands.DemoCommand.FindModel("fruit-cue.onnx");
        var (status, _, stderr) = CliProcess.Run("audit", "--model", model, "--data", manifest, "--labels", "sound,sound,mouldy", "--out", Path.Combine(dir, "out"));
        AssertOneLine(status, stderr, "--labels", "'sound' is given 2 times");
    }

    /// <summary>A loopback HTTP server that answers every request with one status code.</summary>
    private sealed class CannedHttpServer : IDisposable
    {
        private readonly TcpListener _listener = new(IPAddress.Loopback, 0);
        private readonly CancellationTokenSource _stop = new();

        public CannedHttpServer(int status)
        {
            _listener.Start();
            Url = $"http://127.0.0.1:{((IPEndPoint)_listener.LocalEndpoint).Port}";
            _ = Task.Run(async () =>
            {
                while (!_stop.IsCancellationRequested)
                {
                    using var client = await _listener.AcceptTcpClientAsync(_stop.Token);
                    var stream = client.GetStream();
                    var buffer = new byte[8192];
                    var seen = new StringBuilder();
                    while (!seen.ToString().Contains("\r\n\r\n", StringComparison.Ordinal))
                    {
                        int n = await stream.ReadAsync(buffer, _stop.Token);
                        if (n == 0) break;
                        seen.Append(Encoding.ASCII.GetString(buffer, 0, n));
                    }
                    var body = """{"title":"canned"}""";
                    var reply = $"HTTP/1.1 {status} Canned\r\nContent-Type: application/problem+json\r\nContent-Length: {body.Length}\r\nConnection: close\r\n\r\n{body}";
                    await stream.WriteAsync(Encoding.ASCII.GetBytes(reply), _stop.Token);
                }
            });
        }

        public string Url { get; }

        public void Dispose()
        {
            _stop.Cancel();
            _listener.Stop();
            _stop.Dispose();
        }
    }
}

/// <summary>The command line unpacks archives with the same limited extractor as the service: a refusal is exit 2 naming the entry.</summary>
public class ZipInputTests
{
    [Theory]
    [InlineData("dotdot", "../evil.png")]
    [InlineData("symlink", "cat/link.png")]
    [InlineData("duplicate", "appears twice")]
    [InlineData("empty", "holds no files")]
    [InlineData("bzip2", "only stored and deflate")]
    [InlineData("ratio-bomb", "archive bomb")]
    public void Audit_HostileZip_ExitsTwoNamingTheEntry(string kind, string expected)
    {
        var dir = CliProcess.TempDir("zip");
        var zip = Path.Combine(dir, "set.zip");
        File.WriteAllBytes(zip, AuditSvc.Compute.Tests.ImageSets.HostileZips.Build(kind));
        var (status, _, stderr) = CliProcess.Run("audit", "--model", AuditSvc.Cli.Commands.DemoCommand.FindModel("fruit-cue.onnx"), "--data", zip, "--out", Path.Combine(dir, "out"));
        Assert.True(status == 2, stderr);
        Assert.Contains(zip, stderr);
        Assert.Contains(expected, stderr);
        Assert.False(File.Exists(Path.Combine(dir, "evil.png")));
        var work = Path.Combine(dir, "out", ".work");
        Assert.True(!Directory.Exists(work) || Directory.GetDirectories(work).Length == 0, "an unpacked folder stayed");
    }
}

/// <summary>Counts given on the command line are bounded.</summary>
public class CountOptionTests
{
    [Theory]
    [InlineData("--threads", "100000")]
    [InlineData("--threads", "-1")]
    [InlineData("--batch", "1000000")]
    [InlineData("--scores-memory", "1")]
    [InlineData("--scores-memory", "2000000")]
    public void Audit_CountOutOfRange_ExitsTwoNamingTheOption(string option, string value)
    {
        var (status, _, stderr) = CliProcess.Run("audit", "--model", "m.onnx", "--data", "d.csv", option, value);
        Assert.Equal(2, status);
        Assert.Contains($"{option}: {value} is out of range", stderr);
    }

    [Fact]
    public void Bench_ThreadsOutOfRange_ExitsTwo()
    {
        var (status, _, stderr) = CliProcess.Run("bench", "--threads", "4096");
        Assert.Equal(2, status);
        Assert.Contains("--threads", stderr);
    }
}

/// <summary>Only failures of the environment are explained away; an SQL error of our own stays a bug (exit 3).</summary>
public class EnvironmentErrorsTests
{
    [Theory]
    [InlineData("42601", null)]        // syntax error: our SQL is wrong
    [InlineData("23505", null)]        // unique violation: our logic is wrong
    [InlineData("3D000", "auditsvc migrate")]
    [InlineData("28P01", "refused the login")]
    [InlineData("57P03", "not accepting connections")]
    [InlineData("08006", "check the server")]
    public void Explain_PostgresState_OnlyEnvironmentIsExplained(string state, string? expected)
    {
        var why = AuditSvc.Cli.Commands.EnvironmentErrors.Explain(new Npgsql.PostgresException("text", "ERROR", "ERROR", state));
        if (expected is null) Assert.Null(why);
        else Assert.Contains(expected, why, StringComparison.Ordinal);
    }
}
