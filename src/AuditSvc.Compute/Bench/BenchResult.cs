namespace AuditSvc.Compute.Bench;

/// <summary>What to measure: the model, how many images, and the pass settings (zero = the pass chooses).</summary>
public sealed record BenchOptions(
    string ModelPath,
    int Images = 200,
    int BatchSize = 0,
    int Threads = 0,
    int PhotoWidth = 500,
    int PhotoHeight = 375,
    int MemoryFactor = 10,
    int Rounds = 5,
    int LeakRuns = 3,
    string? WorkDirectory = null,
    string? TorchScript = null,
    double MinPhaseSeconds = 1.5,
    int DecodeThreads = 0,
    bool? Spinning = null,
    string Python = "/usr/bin/python3");

/// <summary>Images per second of one phase, the seconds it took, and the process's CPU milliseconds per image.</summary>
public sealed record PhaseRate(double ImagesPerSecond, double Seconds, double CpuMsPerImage);

/// <summary>Medians over the rounds of ratios taken within each round.</summary>
public sealed record Ratios(double Pass, double Whole, double WholeVsBound);

/// <summary>
/// One bench run. Ratios are inside the run: pass / raw and whole / raw, and whole against the rate decode and
/// inference allow together when they share the cores (1 / (1/decode + 1/raw)).
/// </summary>
public sealed record BenchResult(
    string Model,
    string Machine,
    int Cores,
    int Images,
    int BatchSize,
    int InferenceThreads,
    int DecodeThreads,
    string BatchMode,
    int Units,
    string PhotoSize,
    string RawSource,
    PhaseRate Raw,
    PhaseRate Pass,
    PhaseRate Whole,
    PhaseRate Decode,
    double SharedBound,
    Ratios Ratios,
    long PeakBytesAtN,
    long PeakBytesAtNAfter,
    long PeakBytesAtFactorN,
    int FactorImages,
    PhaseRate WholeAtFactorN,
    IReadOnlyList<long> ResidentAfterRuns,
    long ProbabilityBytesPerImage,
    double LoadAverage,
    int Rounds)
{
    /// <summary>The eager-mode script's images per second on the same images and threads, when it ran.</summary>
    public double? TorchImagesPerSecond { get; init; }

    public string? TorchNote { get; init; }

    /// <summary>Median over the rounds of whole pass / script, each round's own.</summary>
    public double? TorchRatio { get; init; }

    public double? WholeVsTorch => TorchRatio;

    public double PassRatio => Ratios.Pass;

    public double WholeRatio => Ratios.Whole;

    public double WholeVsBound => Ratios.WholeVsBound;

    /// <summary>Peak at 10×N against the peak of the N run that follows it (both past the warm-up plateau).</summary>
    public double MemoryGrowth => PeakBytesAtNAfter <= 0 ? double.NaN : (double)PeakBytesAtFactorN / PeakBytesAtNAfter - 1;

    /// <summary>Peak at 10×N against the first N run (which may still be below the plateau).</summary>
    public double MemoryGrowthFromFirst => PeakBytesAtN <= 0 ? double.NaN : (double)PeakBytesAtFactorN / PeakBytesAtN - 1;
}
