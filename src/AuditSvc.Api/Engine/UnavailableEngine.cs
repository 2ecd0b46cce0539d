using AuditSvc.Core.ImageSets;
using AuditSvc.Data.Audits;

namespace AuditSvc.Api.Engine;

/// <summary>Stands in until the engine's chunk and finish calls are wired; says so instead of pretending.</summary>
public sealed class UnavailableEngine : IAuditEngine
{
    private static NotSupportedException Missing() => new("the audit engine is not wired into the service yet");

    public bool SplitsIntoChunks => false;
    public Task<ModelIntake> InspectModelAsync(string modelPath, CancellationToken ct) => throw Missing();
    public Task<ItemTable> IntakeImageSetAsync(string folder, IReadOnlyList<string>? classNames, CancellationToken ct) => throw Missing();
    public Task<byte[]> RunChunkAsync(AuditInputs inputs, int start, int count, CancellationToken ct) => throw Missing();
    public Task<AuditOutcome> FinishAsync(AuditInputs inputs, IReadOnlyList<byte[]> chunks, CancellationToken ct) => throw Missing();
}
