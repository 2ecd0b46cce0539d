using Microsoft.ML.OnnxRuntime;

namespace AuditSvc.Compute.Models;

/// <summary>
/// The one ONNX Runtime environment of the process, with the runtime's telemetry events switched off before any
/// session exists: an audit service must not record model producers, node names or paths on the side.
/// </summary>
public static class OrtEnvironment
{
    private static readonly Lazy<OrtEnv> Env = new(() =>
    {
        var env = OrtEnv.Instance();
        env.DisableTelemetryEvents();
        return env;
    }, LazyThreadSafetyMode.ExecutionAndPublication);

    /// <summary>Creates (once) the environment with telemetry off; call before creating a session.</summary>
    public static void EnsureQuiet() => _ = Env.Value;
}
