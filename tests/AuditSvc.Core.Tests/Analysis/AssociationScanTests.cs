using AuditSvc.Core.Activations;
using AuditSvc.Core.Analysis;
using AuditSvc.Core.Gate;
using AuditSvc.Core.ImageSets;
using AuditSvc.Core.Models;

namespace AuditSvc.Core.Tests.Analysis;

/// <summary>
/// Invented synthetic data (no images): a cue linked 94% to one label, a unit that sees only the cue, a unit that
/// sees only the class, a unit that sees nothing. Ranking within each label must tell the first two apart.
/// </summary>
public class AssociationScanTests
{
    private sealed class MemoryScores(float[][] units, int items) : IUnitScores
    {
        public int ItemCount => items;
        public int UnitCount => units.Length;
        public void ReadUnits(int firstUnit, int count, Span<float> destination)
        {
            for (int k = 0; k < count; k++) units[firstUnit + k].CopyTo(destination.Slice(k * items, items));
        }
    }

    private static (ItemTable Table, ActivationResult Act) Synthetic(int n, double link, int seed)
    {
        var rng = new Random(seed);
        var items = new List<ImageItem>();
        var cueUnit = new float[n];
        var classUnit = new float[n];
        var noise = new float[n];
        for (int i = 0; i < n; i++)
        {
            int label = i % 2;
            bool cue = rng.NextDouble() < (label == 1 ? link : 1 - link);
            int independent = rng.Next(2);
            items.Add(new ImageItem(i, i + 1, $"{i}.png", $"{i}.png", label, [cue ? 1 : 0, independent], ""));
            cueUnit[i] = (float)((cue ? 2.0 : 0.0) + rng.NextDouble());
            classUnit[i] = (float)((label == 1 ? 2.0 : 0.0) + rng.NextDouble());
            noise[i] = (float)rng.NextDouble();
        }
        var table = new ItemTable(["a", "b"],
            [new AttributeColumn("stamp", ["no", "yes"], false), new AttributeColumn("camera", ["c1", "c2"], false)],
            items, new IntakeReport("synthetic", n, n, []));
        var layer = new LayerInfo("features", "Relu", 3, 1, 1, 2, ReceptiveField.Input, true);
        var act = new ActivationResult([new LayerSlice(layer, 0)], new MemoryScores([cueUnit, classUnit, noise], n), new TopN(3, 20),
            Enumerable.Repeat(true, n).ToArray(), new int[n], new float[n * 2], 2, []);
        return (table, act);
    }

    [Fact]
    public void Run_CueLinked94Percent_SeparatesCueUnitFromClassUnit()
    {
        var (table, act) = Synthetic(2000, 0.94, 1);
        var scan = AssociationScan.Run(table, act, new AuditPolicy(), CancellationToken.None);
        AssociationTest Test(int unit, int attr, int value) => scan.Tests.Single(t => t.Unit == unit && t.Attribute == attr && t.Value == value);
        double Q(int unit, int attr, int value) => scan.QValues[Array.IndexOf(scan.Tests, Test(unit, attr, value))];
        // The cue unit: stamp=yes scores higher within each label.
        Assert.True(Test(0, 0, 1).Auroc > 0.9);
        Assert.True(Q(0, 0, 1) < 1e-6);
        // The class unit: no association once the label is held fixed, although stamp predicts its score overall.
        Assert.InRange(Test(1, 0, 1).Auroc, 0.4, 0.6);
        Assert.True(Q(1, 0, 1) > 0.05);
        // Nothing on the independent column.
        Assert.All(scan.Tests.Where(t => t.Attribute == 1), t => Assert.True(scan.QValues[Array.IndexOf(scan.Tests, t)] > 0.05));
    }

    [Fact]
    public void Analyze_CueLinked94Percent_FindsOnlyTheCueUnit()
    {
        var (table, act) = Synthetic(2000, 0.94, 2);
        var plan = new ModelPlan("m.onnx", "", "image", "logits", 2, InputRecipe.Default(32, 32), [], BatchMode.Batched, false);
        var result = AuditAnalysis.Analyze(table, plan, act, new AuditPolicy(), CancellationToken.None);
        var finding = Assert.Single(result.Findings);
        Assert.Equal((0, 0, 1), (finding.Unit, finding.Attribute, finding.Value));
        Assert.Equal(Regions.WholeImage, finding.Region);
        Assert.False(result.Links[1].Confounded);
    }

    [Fact]
    public void Compute_AttributeThatDeterminesTheLabel_IsConfounded()
    {
        var (table, act) = Synthetic(400, 1.0, 3);
        var links = AttributeAssociation.Compute(table, act.Scored, new AuditPolicy());
        Assert.True(links[0].Confounded);
        Assert.False(links[1].Confounded);
    }
}
