using System.Diagnostics;
using AuditSvc.Api.Hosting;
using Npgsql;
using YamlDotNet.Core;
using YamlDotNet.Serialization;

namespace AuditSvc.Api.Tests.Hosting;

/// <summary>
/// docker-compose.yml checked against what the service expects. No Docker engine runs here (nor in CI), so the
/// file is parsed (anchors and merge keys resolved) and its services, images, ports, settings and commands are
/// compared with the hosts' own settings and command line; the containers themselves are not started.
/// </summary>
public sealed class DockerComposeTests
{
    private static readonly Dictionary<string, object> Compose = Load();

    [Fact]
    public void Services_PostgresApiAndWorker_AreAllThere()
    {
        Assert.Equal(["api", "postgres", "worker"], Services.Keys.Order(StringComparer.Ordinal));
        Assert.StartsWith("postgres:", Str(Service("postgres"), "image"), StringComparison.Ordinal);
        Assert.Equal(Str(Service("api"), "image"), Str(Service("worker"), "image"));
    }

    [Theory]
    [InlineData("api")]
    [InlineData("worker")]
    public void Settings_AreKnownToTheServiceAndReachThePostgresService(string name)
    {
        var env = Map(Service(name), "environment");
        var known = ServiceConfiguration.EnvironmentNames.ToHashSet(StringComparer.Ordinal);
        Assert.All(env.Keys, k => Assert.Contains(k, known));
        Assert.StartsWith("/", Str(env, "AUDITSVC_DATA"), StringComparison.Ordinal);
        Assert.Contains(List(Service(name), "volumes"), v => v.ToString()!.EndsWith(":" + Str(env, "AUDITSVC_DATA"), StringComparison.Ordinal));

        var db = new NpgsqlConnectionStringBuilder(Expand(Str(env, "AUDITSVC_DB")));
        var pg = Map(Service("postgres"), "environment");
        Assert.Equal(("postgres", 5432), (db.Host, db.Port)); // the service name, PostgreSQL's port inside the network
        Assert.Equal(Expand(Str(pg, "POSTGRES_USER")), db.Username);
        Assert.Equal(Expand(Str(pg, "POSTGRES_DB")), db.Database);
        Assert.Equal(Expand(Str(pg, "POSTGRES_PASSWORD")), db.Password);
        var workers = int.Parse(Expand(Str(env, "AUDITSVC_WORKERS")), System.Globalization.CultureInfo.InvariantCulture);
        var threads = int.Parse(Expand(Str(env, "AUDITSVC_ONNX_THREADS")), System.Globalization.CultureInfo.InvariantCulture);
        Assert.InRange(workers * threads, 1, 8);
    }

    [Fact]
    public void Api_ServesOnThePublishedPortAndIsCheckedOnHealth()
    {
        var api = Service("api");
        var command = List(api, "command").Select(c => c.ToString()!).ToList();
        Assert.Equal("serve", command[0]);
        var url = new Uri(command[command.IndexOf("--urls") + 1]);
        Assert.Contains(List(api, "ports"), p => p.ToString()!.EndsWith(":" + url.Port, StringComparison.Ordinal));
        Assert.Contains("GET /health", string.Join(" ", List(Map(api, "healthcheck"), "test")), StringComparison.Ordinal);
        Assert.Contains($"/{url.Port}", string.Join(" ", List(Map(api, "healthcheck"), "test")), StringComparison.Ordinal);
        Assert.Equal("service_healthy", Str(Map(Map(api, "depends_on"), "postgres"), "condition"));
    }

    [Fact]
    public void Worker_LeavesMigrationsToTheApiAndWaitsForIt()
    {
        var worker = Service("worker");
        Assert.Equal(["worker"], List(worker, "command").Select(c => c.ToString()));
        Assert.Equal("false", Str(Map(worker, "environment"), "AUDITSVC_MIGRATE"));
        Assert.Equal("service_healthy", Str(Map(Map(worker, "depends_on"), "api"), "condition"));
    }

    [Fact]
    public void Image_PublishesTheCommandLineForThisFrameworkAndRunsIt()
    {
        var build = Map(Service("api"), "build");
        var dockerfile = Str(build, "dockerfile_inline");
        var framework = System.Xml.Linq.XDocument.Load(Path.Combine(RepoRoot(), "Directory.Build.props")).Descendants("TargetFramework").Single().Value;
        var version = framework["net".Length..];
        Assert.Contains($"mcr.microsoft.com/dotnet/sdk:{version}", dockerfile, StringComparison.Ordinal);
        Assert.Contains($"mcr.microsoft.com/dotnet/aspnet:{version}", dockerfile, StringComparison.Ordinal);
        Assert.Contains("dotnet publish src/AuditSvc.Cli", dockerfile, StringComparison.Ordinal);
        Assert.True(File.Exists(Path.Combine(RepoRoot(), "src", "AuditSvc.Cli", "AuditSvc.Cli.csproj")));
        var assembly = System.Xml.Linq.XDocument.Load(Path.Combine(RepoRoot(), "src", "AuditSvc.Cli", "AuditSvc.Cli.csproj")).Descendants("AssemblyName").Single().Value;
        Assert.Contains($"\"/app/{assembly}.dll\"", dockerfile, StringComparison.Ordinal);
    }

    [Theory]
    [InlineData("api")]
    [InlineData("worker")]
    public void Command_IsOneTheCommandLineAccepts(string name)
    {
        // The built command line (auditsvc.dll beside the tests) asked for help on exactly the compose command.
        var args = List(Service(name), "command").Select(c => c.ToString()!).ToList();
        var psi = new ProcessStartInfo("dotnet") { RedirectStandardOutput = true, RedirectStandardError = true, UseShellExecute = false };
        psi.ArgumentList.Add(Path.Combine(AppContext.BaseDirectory, "auditsvc.dll"));
        psi.ArgumentList.Add(args[0]);
        psi.ArgumentList.Add("--help");
        using var p = Process.Start(psi)!;
        var help = p.StandardOutput.ReadToEnd();
        p.WaitForExit();
        Assert.Equal(0, p.ExitCode);
        foreach (var option in args.Skip(1).Where(a => a.StartsWith("--", StringComparison.Ordinal)))
            Assert.Contains(option, help, StringComparison.Ordinal);
    }

    private static Dictionary<string, object> Services => Map(Compose, "services");

    private static Dictionary<string, object> Service(string name) => Map(Services, name);

    private static Dictionary<string, object> Map(Dictionary<string, object> parent, string key) =>
        Assert.IsType<Dictionary<object, object>>(parent[key]).ToDictionary(e => e.Key.ToString()!, e => e.Value);

    private static List<object> List(Dictionary<string, object> parent, string key) => Assert.IsType<List<object>>(parent[key]);

    private static string Str(Dictionary<string, object> parent, string key) => Assert.IsType<string>(parent[key]);

    /// <summary>Compose's ${NAME:-default}, with nothing set: the defaults a newcomer gets.</summary>
    private static string Expand(string value) =>
        System.Text.RegularExpressions.Regex.Replace(value, @"\$\{\w+:-([^}]*)\}", m => m.Groups[1].Value);

    private static Dictionary<string, object> Load()
    {
        using var reader = new StreamReader(Path.Combine(RepoRoot(), "docker-compose.yml"));
        var yaml = new DeserializerBuilder().Build().Deserialize<Dictionary<object, object>>(new MergingParser(new Parser(reader)));
        return yaml.ToDictionary(e => e.Key.ToString()!, e => e.Value);
    }

    private static string RepoRoot()
    {
        for (var dir = new DirectoryInfo(AppContext.BaseDirectory); dir is not null; dir = dir.Parent)
            if (File.Exists(Path.Combine(dir.FullName, "AuditSvc.sln"))) return dir.FullName;
        throw new InvalidOperationException("AuditSvc.sln not found above " + AppContext.BaseDirectory);
    }
}
