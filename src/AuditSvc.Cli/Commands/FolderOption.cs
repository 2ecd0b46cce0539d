using System.CommandLine;

namespace AuditSvc.Cli.Commands;

/// <summary>Output folders: an existing file of that name is a usage error (exit 2), found before any work starts.</summary>
internal static class FolderOption
{
    public static T MustNotBeAFile<T>(this T option) where T : Option
    {
        option.Validators.Add(result =>
        {
            if (result.Tokens.Count == 0) return;
            var path = Path.GetFullPath(result.Tokens[^1].Value);
            if (File.Exists(path)) result.AddError($"{option.Name}: '{path}' is a file; give a folder (it is created when missing)");
        });
        return option;
    }
}
