namespace AuditSvc.Core;

/// <summary>
/// Bad input from the user: a file, row or field that cannot be used. Hosts map it to exit status 2
/// (command line) or a problem-details 400 (service). The message always names what is wrong.
/// </summary>
public sealed class AuditInputException(string subject, string message, Exception? inner = null)
    : Exception($"{subject}: {message}", inner)
{
    /// <summary>The file, row or field the message is about.</summary>
    public string Subject { get; } = subject;
}
