using System.ComponentModel.DataAnnotations;
using AuditSvc.Api.Hosting;
using Microsoft.Extensions.Configuration;

namespace AuditSvc.Api.Tests.Hosting;

public sealed class ServiceOptionsTests
{
    [Fact]
    public void Read_ShortEnvironmentNames_OverrideAspNetKeys()
    {
        var config = new ConfigurationBuilder().AddInMemoryCollection(new Dictionary<string, string?>
        {
            ["ConnectionStrings:Audit"] = "Host=a",
            ["AUDITSVC_DB"] = "Host=b",
            ["AUDITSVC_DATA"] = "/srv/x",
            ["AUDITSVC_WORKERS"] = "3",
            ["AUDITSVC_MIGRATE"] = "false",
        }).Build();

        var o = ServiceConfiguration.Read(config);

        Assert.Equal(("Host=b", "/srv/x", 3, false), (o.ConnectionString, o.DataRoot, o.Workers, o.MigrateOnStart));
    }

    [Fact]
    public void Validate_WorkersTimesThreadsFarAboveCores_NamesBothSettings()
    {
        var o = new ServiceOptions { ConnectionString = "Host=a", DataRoot = "/srv/x", Workers = Environment.ProcessorCount * 2 + 1, OnnxThreads = 1 };

        var errors = o.Validate(new ValidationContext(o)).ToList();

        var e = Assert.Single(errors);
        Assert.Contains("AUDITSVC_WORKERS", e.ErrorMessage, StringComparison.Ordinal);
        Assert.Contains("AUDITSVC_ONNX_THREADS", e.ErrorMessage, StringComparison.Ordinal);
    }

    [Fact]
    public void Validate_RelativeDataRoot_IsRefused()
    {
        var o = new ServiceOptions { ConnectionString = "Host=a", DataRoot = "data", Workers = 1 };

        Assert.Contains(o.Validate(new ValidationContext(o)), r => r.MemberNames.Contains(nameof(ServiceOptions.DataRoot)));
    }
}
