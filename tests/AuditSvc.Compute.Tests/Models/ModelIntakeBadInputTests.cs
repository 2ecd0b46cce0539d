using AuditSvc.Compute.Models;
using AuditSvc.Core;
using Onnx;

namespace AuditSvc.Compute.Tests.Models;

public class ModelIntakeBadInputTests
{
    private static AuditInputException Refused(string path, ModelLoadOptions? options = null) =>
        Assert.Throws<AuditInputException>(() => ModelIntake.Load(path, options));

    [Fact]
    public void Load_TextFile_SaysNotOnnx()
    {
        using var dir = new TempDir();
        string path = dir.File("notes.onnx", "image,label\na.png,cat\n");
        var e = Refused(path);
        Assert.Equal(path, e.Subject);
        Assert.Contains("not a parseable ONNX model", e.Message);
    }

    [Fact]
    public void Load_ExternalDataInitializer_NamesTensorAndField()
    {
        using var dir = new TempDir();
        var g = TestModels.SmallCnn();
        var w = g.Graph.Initializer[0];
        w.FloatData.Clear();
        w.DataLocation = TensorProto.Types.DataLocation.External;
        w.ExternalData.Add(new StringStringEntryProto { Key = "location", Value = "weights.bin" });
        string path = g.Save(dir.Path, "ext.onnx");
        var e = Refused(path);
        Assert.Equal(path, e.Subject);
        Assert.Contains($"'{w.Name}'", e.Message);
        Assert.Contains("external_data", e.Message);
    }

    [Fact]
    public void Load_ExternalDataInConstantAttribute_IsRefused()
    {
        using var dir = new TempDir();
        var g = TestModels.SmallCnn();
        var t = new TensorProto { Name = "hidden", DataType = (int)TensorProto.Types.DataType.Float };
        t.ExternalData.Add(new StringStringEntryProto { Key = "location", Value = "/etc/passwd" });
        var node = new NodeProto { OpType = "Constant", Name = "k" };
        node.Output.Add("k_out");
        node.Attribute.Add(new AttributeProto { Name = "value", Type = AttributeProto.Types.AttributeType.Tensor, T = t });
        g.Graph.Node.Insert(0, node);
        var e = Refused(g.Save(dir.Path, "const.onnx"));
        Assert.Contains("'hidden'", e.Message);
        Assert.Contains("attribute 'value'", e.Message);
    }

    [Fact]
    public void Load_TwoImageInputs_NamesBoth()
    {
        using var dir = new TempDir();
        var g = new OnnxGraphBuilder();
        var a = g.Input("left", 1, 3, 8, 8);
        var b = g.Input("right", 1, 3, 8, 8);
        var sum = g.Add(a, b);
        g.Output(sum, 1, 3, 8, 8);
        var e = Refused(g.Save(dir.Path, "two.onnx"));
        Assert.Contains("field 'input'", e.Message);
        Assert.Contains("left, right", e.Message);
    }

    [Fact]
    public void Load_Rank3Input_NamesShapeField()
    {
        using var dir = new TempDir();
        var g = new OnnxGraphBuilder();
        var x = g.Input("seq", 1, 3, 8);
        g.Output(g.Relu(x), 1, 3, 8);
        string path = g.Save(dir.Path, "rank3.onnx");
        var e = Refused(path);
        Assert.Equal(path, e.Subject);
        Assert.Contains("rank 3", e.Message);
        Assert.Contains("field 'shape'", e.Message);
    }

    [Fact]
    public void Load_UnknownLayerName_ListsWhatExists()
    {
        using var dir = new TempDir();
        string path = TestModels.SmallCnn().Save(dir.Path, "cnn.onnx");
        var e = Refused(path, new ModelLoadOptions(Layers: ["conv_99"]));
        Assert.Equal("--layers", e.Subject);
        Assert.Contains("'conv_99'", e.Message);
        Assert.Contains("relu_", e.Message);
    }

    [Fact]
    public void Load_RecipeNotJson_NamesRecipeFile()
    {
        using var dir = new TempDir();
        string path = TestModels.SmallCnn().Save(dir.Path, "cnn.onnx");
        string recipe = dir.File("cnn.recipe.json", "{ \"width\": 32, ");
        var e = Refused(path);
        Assert.Equal(recipe, e.Subject);
        Assert.Contains("not valid JSON", e.Message);
    }

    [Theory]
    [InlineData("{\"mean\": \"imagenet\"}", "'mean'")]
    [InlineData("{\"resize\": \"crop\"}", "'resize'")]
    [InlineData("{\"channel_order\": \"rbg\"}", "'channel_order'")]
    [InlineData("{\"std\": [0.2, 0.2]}", "'std'")]
    [InlineData("{\"class_names\": [\"a\", \"b\"]}", "'class_names'")]
    [InlineData("{\"width\": 64}", "'width'")]
    [InlineData("{\"colour\": \"rgb\"}", "'colour'")]
    public void Load_RecipeBadField_NamesFileAndField(string json, string field)
    {
        using var dir = new TempDir();
        string path = TestModels.SmallCnn().Save(dir.Path, "cnn.onnx");
        string recipe = dir.File("cnn.recipe.json", json);
        var e = Refused(path);
        Assert.Equal(recipe, e.Subject);
        Assert.Contains(field, e.Message);
    }

    [Fact]
    public void Load_MissingFile_NamesFile()
    {
        var e = Refused("/nonexistent/model.onnx");
        Assert.Equal("/nonexistent/model.onnx", e.Subject);
    }
}
