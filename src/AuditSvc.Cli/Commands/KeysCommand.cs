using System.CommandLine;
using AuditSvc.Core;
using AuditSvc.Data.Teams;

namespace AuditSvc.Cli.Commands;

/// <summary>`auditsvc keys create|list|revoke`: API keys, each belonging to one team.</summary>
internal static class KeysCommand
{
    public static Command Create()
    {
        var cmd = new Command("keys", "manage API keys (each key belongs to a team and sees only its rows)");
        cmd.Subcommands.Add(CreateKey());
        cmd.Subcommands.Add(ListKeys());
        cmd.Subcommands.Add(RevokeKey());
        return cmd;
    }

    private static Command CreateKey()
    {
        var db = ServiceDb.Option();
        var team = new Option<string>("--team") { Description = "team name (created when new)", Required = true };
        var name = new Option<string>("--name") { Description = "what the key is for", DefaultValueFactory = _ => "key" };
        var cmd = new Command("create", "create a key; it is printed once and only its hash is stored") { db, team, name };
        cmd.SetAction(async (parse, ct) =>
        {
            var teamName = parse.GetValue(team)!.Trim();
            if (teamName.Length is 0 or > 100) throw new AuditInputException("--team", "must be 1 to 100 characters");
            await using var source = ServiceDb.Open(parse, db);
            var t = await new TeamStore(source).EnsureAsync(teamName, ct);
            var (key, info) = await new ApiKeyStore(source).CreateAsync(t.Id, parse.GetValue(name)!, ct);
            Console.WriteLine(key);
            Console.Error.WriteLine($"created key {info.Prefix} for team '{info.TeamName}'; store it now, it cannot be shown again");
            return ExitCodes.Pass;
        });
        return cmd;
    }

    private static Command ListKeys()
    {
        var db = ServiceDb.Option();
        var cmd = new Command("list", "list keys (prefix, team, name, created, revoked)") { db };
        cmd.SetAction(async (parse, ct) =>
        {
            await using var source = ServiceDb.Open(parse, db);
            foreach (var k in await new ApiKeyStore(source).ListAsync(ct))
                Console.WriteLine($"{k.Prefix}  {k.TeamName}  {k.Name}  {k.CreatedAt:u}  {(k.RevokedAt is { } r ? $"revoked {r:u}" : "active")}");
            return ExitCodes.Pass;
        });
        return cmd;
    }

    private static Command RevokeKey()
    {
        var db = ServiceDb.Option();
        var prefix = new Argument<string>("prefix") { Description = "the key's prefix, as `keys list` shows it" };
        var cmd = new Command("revoke", "revoke a key at once") { db, prefix };
        cmd.SetAction(async (parse, ct) =>
        {
            await using var source = ServiceDb.Open(parse, db);
            var p = parse.GetValue(prefix)!;
            if (!await new ApiKeyStore(source).RevokeAsync(p, ct)) throw new AuditInputException("prefix", $"no active key with prefix '{p}'");
            Console.WriteLine($"revoked {p}");
            return ExitCodes.Pass;
        });
        return cmd;
    }
}
