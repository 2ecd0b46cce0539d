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
/// Screenshots of the list, audit, unit and report pages are kept (see <see cref="Screenshots"/>).
/// </summary>
public sealed class BrowserTests(ITestOutputHelper output)
{
    [PgFact]
    public async Task ReviewerDesk_InHeadlessChromium_FromListToSignedDecision()
    {
        if (!Chromium.Available(output)) return;
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1, realEngine: true);
        var id = await DemoAuditAsync(svc);
        var (key, info) = await BrowserSession.KeyAsync(svc, "team-a", "rita");
        var shots = Screenshots();

        var loginDom = await Chromium.RunAsync("--dump-dom", new Uri(svc.Address, "/ui/login").ToString());
        Assert.Contains("<form method=\"post\" action=\"/ui/login\" id=\"login\">", loginDom, StringComparison.Ordinal);
        Assert.Contains("name=\"__af\"", loginDom, StringComparison.Ordinal);

        await using var tools = await DevTools.StartAsync();
        await tools.SendAsync("Page.enable");
        await tools.ViewportAsync(1366, 768);
        // Sign in through the login form, as a reviewer does.
        await tools.NavigateAsync(new Uri(svc.Address, "/ui/login"));
        await tools.FollowAsync($"document.querySelector('input[name=key]').value = '{key}'; document.getElementById('login').submit();");

        // The list: names, not ids; then the audit by its link.
        Assert.Contains("fruit demo (invented)", await tools.EvaluateAsync("document.getElementById('audits').innerText"), StringComparison.Ordinal);
        await Save(tools, shots, "list.png", 768);
        await tools.FollowAsync($"document.querySelector('#audits a[href=\"/ui/audits/{id}\"]').click()");

        // The verdict once, with a plain sentence per reason; the stamp's card with its region map, exemplars and review control.
        var band = await tools.EvaluateAsync("document.getElementById('verdict-band').innerText");
        Assert.Contains("BLOCK", band, StringComparison.Ordinal);
        Assert.Contains("The model's decisions follow stamp", band, StringComparison.Ordinal);
        Assert.Equal("1", await tools.EvaluateAsync("String(document.querySelectorAll('.verdict-word').length)"));
        Assert.Equal("true", await tools.EvaluateAsync("String(!!document.querySelector('#cue-stamp-yes svg.regionmap'))"));
        Assert.NotEqual("0", await tools.EvaluateAsync("String(document.querySelectorAll('#cue-stamp-yes .mini img').length)"));
        // Every picture on the first card loads (they are cut on request, then cached by the browser).
        Assert.Equal("0", await tools.EvaluateAsync(
            "Promise.all(Array.from(document.querySelectorAll('#decide .cuecard:first-of-type img')).map(i => { i.loading = 'eager'; return i.decode().then(() => 0, () => 1); })).then(r => String(r.reduce((a, b) => a + b, 0)))"));
        // The first card's review control is reachable without scrolling past that card.
        var cardBottom = double.Parse(await tools.EvaluateAsync("String(document.querySelector('#decide .cuecard').getBoundingClientRect().bottom + window.scrollY)"), Inv);
        var formTop = double.Parse(await tools.EvaluateAsync("String(document.querySelector('#decide .cuecard form.decide').getBoundingClientRect().top + window.scrollY)"), Inv);
        Assert.True(formTop < cardBottom, "the review control is not on the first card");
        await Save(tools, shots, "audit.png", 768);
        output.WriteLine("audit page bytes: " + await tools.EvaluateAsync("String(new Blob([document.documentElement.outerHTML]).size)"));
        await Save(tools, shots, "audit-first-card.png", Math.Min(cardBottom + 16, 2400));

        // A decision recorded on the card: confirmation on the card, the signer from the session, the history entry.
        await tools.FollowAsync("document.getElementById('cue-stamp-yes-spurious').click(); " +
            "document.querySelector('#cue-stamp-yes textarea').value = 'corner stamp <b>not</b> fruit'; document.querySelector('#cue-stamp-yes form.decide').submit();");
        var confirm = await tools.EvaluateAsync("document.querySelector('#cue-stamp-yes .confirm')?.innerText ?? ''");
        Assert.Contains("Recorded: Spurious", confirm, StringComparison.Ordinal);
        Assert.Contains($"rita ({info.Prefix})", confirm, StringComparison.Ordinal);
        var history = await tools.EvaluateAsync("document.getElementById('history').innerText");
        Assert.Contains("stamp=yes", history, StringComparison.Ordinal);
        Assert.Contains("corner stamp <b>not</b> fruit", history, StringComparison.Ordinal); // shown as text, never markup
        Assert.Equal("0", await tools.EvaluateAsync("String(document.querySelectorAll('#history b').length)"));

        // A unit page from the card: its 3×3 grid, the toggle to whole images, the interventions on its cue.
        await tools.FollowAsync("document.querySelector('#cue-stamp-yes .unitgrid a').click()");
        Assert.Equal("9", await tools.EvaluateAsync("String(document.querySelectorAll('.unit-cue .exemplars img').length)"));
        Assert.Contains("What moving stamp = yes did", await tools.EvaluateAsync("document.body.innerText"), StringComparison.Ordinal);
        await Save(tools, shots, "unit.png", 768);
        await tools.FollowAsync("document.querySelector('a.toggle').click()");
        Assert.Equal("9", await tools.EvaluateAsync("String(document.querySelectorAll('.unit-cue .exemplars.whole img').length)"));

        // The full report, self-contained, its pictures embedded once each.
        await tools.NavigateAsync(new Uri(svc.Address, $"/ui/audits/{id}/report"));
        Assert.Equal("0", await tools.EvaluateAsync("String(document.querySelectorAll('img[src^=\"http\"]').length)"));
        await Save(tools, shots, "report.png", 768);
        output.WriteLine("report bytes: " + await tools.EvaluateAsync("String(new Blob([document.documentElement.outerHTML]).size)"));
        output.WriteLine($"screenshots: {shots}");
    }

    private static readonly System.Globalization.CultureInfo Inv = System.Globalization.CultureInfo.InvariantCulture;

    /// <summary>Screenshots are kept as test artifacts: under AUDITSVC_UI_SCREENSHOTS when set, else artifacts/ui in the repository.</summary>
    private static string Screenshots() =>
        Directory.CreateDirectory(Environment.GetEnvironmentVariable("AUDITSVC_UI_SCREENSHOTS") is { Length: > 0 } dir
            ? dir : Path.Combine(RepoRoot(), "artifacts", "ui")).FullName;

    private static async Task Save(DevTools tools, string folder, string name, double height)
    {
        var png = await tools.ScreenshotAsync(0, height);
        AssertPng(png);
        await File.WriteAllBytesAsync(Path.Combine(folder, name), png);
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
