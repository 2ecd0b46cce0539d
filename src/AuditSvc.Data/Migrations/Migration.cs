using System.Globalization;
using System.Reflection;
using AuditSvc.Core;

namespace AuditSvc.Data.Migrations;

/// <summary>One numbered, forward-only script from migrations/NNNN_what_it_does.sql.</summary>
public sealed record Migration(int Version, string Name, string Sql)
{
    private const string Prefix = "migrations/";

    /// <summary>The scripts embedded in this assembly, in version order.</summary>
    public static IReadOnlyList<Migration> Embedded()
    {
        var asm = typeof(Migration).Assembly;
        var list = new List<Migration>();
        foreach (var res in asm.GetManifestResourceNames().Where(n => n.StartsWith(Prefix, StringComparison.Ordinal)))
        {
            var file = res[Prefix.Length..];
            list.Add(Parse(file, Read(asm, res)));
        }
        list.Sort((a, b) => a.Version.CompareTo(b.Version));
        for (var i = 1; i < list.Count; i++)
        {
            if (list[i].Version == list[i - 1].Version)
                throw new AuditInputException($"migrations/{list[i].Name}", $"version {list[i].Version} is used twice");
        }
        return list;
    }

    /// <summary>Reads "0003_add_reviews.sql" as version 3, name "0003_add_reviews".</summary>
    public static Migration Parse(string fileName, string sql)
    {
        var name = Path.GetFileNameWithoutExtension(fileName);
        var cut = name.IndexOf('_', StringComparison.Ordinal);
        if (cut != 4 || !int.TryParse(name.AsSpan(0, 4), NumberStyles.None, CultureInfo.InvariantCulture, out var version) || version == 0)
            throw new AuditInputException($"migrations/{fileName}", "name must be NNNN_what_it_does.sql with NNNN from 0001");
        return new Migration(version, name, sql);
    }

    private static string Read(Assembly asm, string resource)
    {
        using var stream = asm.GetManifestResourceStream(resource)!;
        using var reader = new StreamReader(stream);
        return reader.ReadToEnd();
    }
}
