using System.Net;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Cli.Demo;
using Xunit.Abstractions;

namespace AuditSvc.Api.Tests.Ui;

/// <summary>
/// The pages in a real browser. The login page is rendered with Chromium's own --dump-dom and --screenshot. The
/// audit page sits behind a sign-in, which the command-line flags cannot do, so the test signs in over HTTP as a
/// browser would, puts that session cookie into Chromium through the DevTools protocol (Network.setCookie), and
/// navigates there: no test-only endpoint, the page is served exactly as to a reviewer.
/// Set AUDITSVC_UI_SCREENSHOT to a .png path to keep the audit page's screenshots.
/// </summary>
public sealed class BrowserTests(ITestOutputHelper output)
{
    [PgFact]
    public async Task Pages_InHeadlessChromium_RenderLoginFormAndSignedInAuditPage()
    {
        if (!Chromium.Available(output)) return;
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1, realEngine: true);
        var id = await DemoAuditAsync(svc);
        var (key, info) = await BrowserSession.KeyAsync(svc, "team-a", "rita");
        using var session = new BrowserSession(svc);
        (await session.LoginAsync(key)).Dispose();
        var token = BrowserSession.TokenIn(await session.GetPageAsync($"/ui/audits/{id}"));
        using (var review = await session.PostFormAsync($"/ui/audits/{id}/reviews", ("__af", token), ("cue", "stamp=yes"), ("decision", "spurious-cue"),
            ("comment", "corner stamp, not fruit")))
            Assert.Equal(HttpStatusCode.SeeOther, review.StatusCode);
        var shots = Directory.CreateTempSubdirectory("auditsvc-shots-").FullName;

        var loginDom = await Chromium.RunAsync("--dump-dom", new Uri(svc.Address, "/ui/login").ToString());
        var loginPng = Path.Combine(shots, "login.png");
        await Chromium.RunAsync($"--screenshot={loginPng}", new Uri(svc.Address, "/ui/login").ToString());

        Assert.Contains("<form method=\"post\" action=\"/ui/login\" id=\"login\">", loginDom, StringComparison.Ordinal);
        Assert.Contains("name=\"key\"", loginDom, StringComparison.Ordinal);
        Assert.Contains("name=\"__af\"", loginDom, StringComparison.Ordinal);
        AssertPng(await File.ReadAllBytesAsync(loginPng));

        await using var tools = await DevTools.StartAsync();
        await tools.SendAsync("Network.setCookie", new
        {
            name = session.Session!.Name, value = session.Session.Value, url = svc.Address.ToString(), httpOnly = true, sameSite = "Strict",
        });
        await tools.SendAsync("Page.enable");
        await tools.NavigateAsync(new Uri(svc.Address, $"/ui/audits/{id}"));
        var dom = await tools.EvaluateAsync("document.documentElement.outerHTML");
        var images = await tools.EvaluateAsync("String(document.querySelectorAll('#report img').length)");
        var broken = await tools.EvaluateAsync("String(Array.from(document.images).filter(i => !i.complete || i.naturalWidth === 0).length)");
        var reviewTop = await tools.EvaluateAsync("String(Math.floor(document.getElementById('review').getBoundingClientRect().top + window.scrollY))");
        var top = await tools.ScreenshotAsync(0, 1400);
        var panel = await tools.ScreenshotAsync(double.Parse(reviewTop, System.Globalization.CultureInfo.InvariantCulture), 1200);
        await File.WriteAllBytesAsync(Path.Combine(shots, "audit.png"), top);
        await File.WriteAllBytesAsync(Path.Combine(shots, "audit-review.png"), panel);
        if (Environment.GetEnvironmentVariable("AUDITSVC_UI_SCREENSHOT") is { Length: > 0 } keep)
        {
            await File.WriteAllBytesAsync(keep, top);
            await File.WriteAllBytesAsync(Path.ChangeExtension(keep, null) + "-review.png", panel);
        }
        Chromium.TryDelete(shots);

        Assert.DoesNotContain("id=\"login\"", dom, StringComparison.Ordinal);
        Assert.Contains("id=\"page-verdict\"", dom, StringComparison.Ordinal);
        Assert.Contains("id=\"verdict\"", dom, StringComparison.Ordinal); // the report's own banner, embedded
        Assert.Contains("id=\"review\"", dom, StringComparison.Ordinal);
        Assert.Contains($"rita ({info.Prefix})", dom, StringComparison.Ordinal);
        Assert.Contains("corner stamp, not fruit", dom, StringComparison.Ordinal);
        Assert.Contains("exemplars in the report ↑", dom, StringComparison.Ordinal);
        Assert.Equal("0", await tools.EvaluateAsync( // every panel link to a finding lands on an article of the report
            "String(Array.from(document.querySelectorAll('#review a[href^=\\'#f-\\']')).filter(a => !document.getElementById(a.getAttribute('href').slice(1))).length)"));
        Assert.True(int.Parse(images, System.Globalization.CultureInfo.InvariantCulture) > 0, "no exemplar crops in the report");
        Assert.Equal("0", broken);
        AssertPng(top);
        AssertPng(panel);
    }

    private static void AssertPng(byte[] bytes) =>
        Assert.True(bytes.Length > 1000 && bytes.AsSpan(0, 8).SequenceEqual(new byte[] { 0x89, 0x50, 0x4E, 0x47, 0x0D, 0x0A, 0x1A, 0x0A }), "not a PNG");

    // The invented demo scenario (as in ComputeEngineTests): a corner stamp linked to one class, audited by the real engine.
    private static async Task<Guid> DemoAuditAsync(ServiceUnderTest svc)
    {
        using var api = await svc.ClientAsync("team-a");
        DemoSetGenerator.Write(Path.Combine(svc.DataRoot, "incoming", "team-a", "fruit"), new DemoSetOptions(600, 0.85, 20261202));
        var model = Path.Combine(RepoRoot(), "seed-demo", "models", "fruit-cue.onnx");
        using var form = new MultipartFormDataContent();
        form.Add(new StringContent(await File.ReadAllTextAsync(Path.ChangeExtension(model, ".recipe.json"))), "recipe");
        form.Add(new StringContent("fruit-cue (invented demo)"), "name");
        var file = new ByteArrayContent(await File.ReadAllBytesAsync(model));
        file.Headers.ContentType = new MediaTypeHeaderValue("application/octet-stream");
        form.Add(file, "model", Path.GetFileName(model));
        var uploaded = await api.PostAsync("/api/models", form);
        Assert.Equal(HttpStatusCode.Created, uploaded.StatusCode);
        var modelId = (await uploaded.Content.ReadFromJsonAsync<JsonElement>()).GetProperty("id").GetGuid();
        var set = await api.PostAsJsonAsync("/api/image-sets/folder", new { path = "incoming/team-a/fruit", name = "fruit demo (invented)", modelId });
        Assert.Equal(HttpStatusCode.Created, set.StatusCode);
        var setId = (await set.Content.ReadFromJsonAsync<JsonElement>()).GetProperty("id").GetGuid();
        var submit = await api.PostAsJsonAsync("/api/audits", new { modelId, imageSetId = setId, chunkSize = 300, policy = new { allowed_attributes = new[] { "defect_area" } } });
        var id = (await submit.Content.ReadFromJsonAsync<AuditSnapshot>())!.Id;
        Assert.Equal("done", (await svc.WaitForEndAsync(api, id)).State);
        return id;
    }

    private static string RepoRoot()
    {
        for (var dir = new DirectoryInfo(AppContext.BaseDirectory); dir is not null; dir = dir.Parent)
            if (File.Exists(Path.Combine(dir.FullName, "AuditSvc.sln"))) return dir.FullName;
        throw new DirectoryNotFoundException("AuditSvc.sln not found above " + AppContext.BaseDirectory);
    }
}
