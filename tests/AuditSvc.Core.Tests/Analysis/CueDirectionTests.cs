using AuditSvc.Core.Activations;
using AuditSvc.Core.Analysis;
using AuditSvc.Core.ImageSets;
using AuditSvc.Core.Models;

namespace AuditSvc.Core.Tests.Analysis;

/// <summary>Invented data: a balanced set where a stamp is independent of the label but pushes predictions to class 2.</summary>
public class CueDirectionTests
{
    private static (ItemTable, ActivationResult) Balanced(bool modelFollowsStamp)
    {
        var items = new List<ImageItem>();
        var predicted = new int[600];
        for (int i = 0; i < 600; i++)
        {
            int label = i % 3, stamp = (i / 3) % 2;
            items.Add(new ImageItem(i, i + 1, $"{i}.png", $"{i}.png", label, [stamp], ""));
            predicted[i] = modelFollowsStamp && stamp == 1 ? 2 : label;
        }
        var table = new ItemTable(["a", "b", "c"], [new AttributeColumn("stamp", ["no", "yes"], false)], items, new IntakeReport("invented", 600, 600, []));
        var layer = new LayerInfo("l", "Relu", 1, 1, 1, 2, ReceptiveField.Input, true);
        var act = new ActivationResult([new LayerSlice(layer, 0)], null!, new TopN(1, 20), Enumerable.Repeat(true, 600).ToArray(), predicted, new float[1800], 3, []);
        return (table, act);
    }

    [Fact]
    public void PushedClass_BalancedSetAndAReliantModel_IsTheClassTheCueDrivesTo()
    {
        var (table, act) = Balanced(modelFollowsStamp: true);
        Assert.Equal(2, CueDirection.PushedClass(table, act, 0, 1));
    }

    [Fact]
    public void GroupAccuracy_BalancedSetAndAReliantModel_ShowsTheGap()
    {
        var (table, act) = Balanced(modelFollowsStamp: true);
        var link = new AttributeLink(0, 0, false);
        var (groups, gap) = GroupAccuracyAnalysis.Compute(table, act, link, new AuditSvc.Core.Gate.AuditPolicy());
        Assert.NotNull(gap);
        // Labels a and b lose everything to the stamp; c, the stamp's own class, is right either way: (1 + 1 + 0) / 3.
        // Cross-fitting weighs each (half, label) stratum by its own counts, so the halves' unequal sizes move the
        // pooled value off 2/3 in the third decimal.
        Assert.Equal(2.0 / 3.0, gap!.Value, 0.01);
        Assert.True(gap.Low > 0.5, $"interval {gap.Low}..{gap.High}");
        Assert.Equal("conflicting", groups.Single(g => g.Label == "a" && g.Value == "yes").Relation);
        Assert.Equal("aligned", groups.Single(g => g.Label == "c" && g.Value == "yes").Relation);
    }

    [Fact]
    public void GroupAccuracy_BalancedSetAndAModelThatIgnoresTheCue_HasNoGap()
    {
        var (table, act) = Balanced(modelFollowsStamp: false);
        var (_, gap) = GroupAccuracyAnalysis.Compute(table, act, new AttributeLink(0, 0, false), new AuditSvc.Core.Gate.AuditPolicy());
        Assert.True(gap is null || Math.Abs(gap.Value) < 1e-9);
    }
}
