using System.ComponentModel.DataAnnotations;

namespace AuditSvc.Api.Hosting;

/// <summary>
/// Every setting of the service, bound once at start-up from configuration (environment variables with the
/// AUDITSVC_ prefix, or the usual ASP.NET sources) and validated before the host starts.
/// </summary>
public sealed class ServiceOptions : IValidatableObject
{
    /// <summary>PostgreSQL connection string: AUDITSVC_DB, else ConnectionStrings__Audit.</summary>
    [Required(ErrorMessage = "AUDITSVC_DB (or ConnectionStrings__Audit) is not set: the service needs a PostgreSQL connection string.")]
    public string ConnectionString { get; set; } = "";

    /// <summary>Artifact root (AUDITSVC_DATA): model files, image sets, chunk scratch. Rows hold paths relative to it.</summary>
    [Required(ErrorMessage = "AUDITSVC_DATA is not set: the service needs a folder for artifacts.")]
    public string DataRoot { get; set; } = "";

    /// <summary>Images per chunk job; short chunks keep a lost worker's loss small.</summary>
    [Range(1, 1_000_000)] public int ChunkSize { get; set; } = 256;

    /// <summary>Job workers in this process (AUDITSVC_WORKERS); 0 means no job server (API only).</summary>
    [Range(0, 256)] public int Workers { get; set; } = DefaultWorkers();

    /// <summary>ONNX Runtime intra-op threads per job (AUDITSVC_ONNX_THREADS); workers × threads should not pass the core count.</summary>
    [Range(1, 256)] public int OnnxThreads { get; set; } = 1;

    /// <summary>How long a chunk stays invisible to other workers without a heartbeat (AUDITSVC_LEASE_SECONDS).</summary>
    [Range(5, 86_400)] public int LeaseSeconds { get; set; } = 120;

    /// <summary>How often each worker process looks for work a dead worker left (AUDITSVC_RECONCILE_SECONDS).</summary>
    [Range(1, 3_600)] public int ReconcileSeconds { get; set; } = 30;

    /// <summary>
    /// Chunks each team may have queued or running at once (AUDITSVC_TEAM_CHUNKS), shared by all its audits; 0 means
    /// as many as there are audit job workers across the live servers (at least 2), so one team alone uses them all.
    /// </summary>
    [Range(0, 100_000)] public int TeamChunks { get; set; }

    /// <summary>Largest upload accepted, in bytes (AUDITSVC_MAX_UPLOAD_BYTES).</summary>
    [Range(1, long.MaxValue)] public long MaxUploadBytes { get; set; } = 8L << 30;

    /// <summary>Requests per second each API key may make to /api, sustained (AUDITSVC_RATE_PER_SECOND).</summary>
    [Range(1, 100_000)] public int RatePerSecond { get; set; } = 50;

    /// <summary>Requests each API key may make at once before the sustained rate applies (AUDITSVC_RATE_BURST).</summary>
    [Range(1, 100_000)] public int RateBurst { get; set; } = 200;

    /// <summary>Uploads and submissions (POST) each API key may make per minute (AUDITSVC_WRITES_PER_MINUTE).</summary>
    [Range(1, 100_000)] public int WritesPerMinute { get; set; } = 60;

    /// <summary>Teams whose keys may open the job dashboard at /hangfire (AUDITSVC_OPERATOR_TEAMS, comma separated).</summary>
    public string OperatorTeams { get; set; } = "operators";

    /// <summary>Apply pending schema migrations when the host starts (AUDITSVC_MIGRATE).</summary>
    public bool MigrateOnStart { get; set; } = true;

    public TimeSpan Lease => TimeSpan.FromSeconds(LeaseSeconds);

    // Single-threaded inference sessions side by side use the cores with the least contention; keep one core
    // for the web host and the database client when there are several.
    private static int DefaultWorkers() => Math.Max(1, Environment.ProcessorCount - (Environment.ProcessorCount > 2 ? 1 : 0));

    public IEnumerable<ValidationResult> Validate(ValidationContext validationContext)
    {
        if (!string.IsNullOrEmpty(DataRoot) && !Path.IsPathFullyQualified(DataRoot))
            yield return new ValidationResult($"AUDITSVC_DATA must be an absolute path, got '{DataRoot}'.", [nameof(DataRoot)]);
        if (Workers * OnnxThreads > Math.Max(Environment.ProcessorCount, 1) * 2)
            yield return new ValidationResult(
                $"AUDITSVC_WORKERS ({Workers}) × AUDITSVC_ONNX_THREADS ({OnnxThreads}) oversubscribes {Environment.ProcessorCount} cores more than twice over.",
                [nameof(Workers), nameof(OnnxThreads)]);
    }
}
