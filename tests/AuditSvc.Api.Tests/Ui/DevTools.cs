using System.Diagnostics;
using System.Net.Http.Json;
using System.Net.WebSockets;
using System.Text;
using System.Text.Json;

namespace AuditSvc.Api.Tests.Ui;

/// <summary>
/// A minimal Chrome DevTools protocol client over System.Net.WebSockets: one headless Chromium with a debugging
/// port, one page, commands answered in order. Enough to put a cookie in place, navigate, read the DOM and take a
/// screenshot, which the command-line flags cannot do for a page behind a sign-in.
/// </summary>
internal sealed class DevTools : IAsyncDisposable
{
    private readonly Process _browser;
    private readonly string _profile;
    private readonly ClientWebSocket _socket = new();
    private readonly List<JsonElement> _events = [];
    private int _nextId;

    private DevTools(Process browser, string profile) { _browser = browser; _profile = profile; }

    public static async Task<DevTools> StartAsync()
    {
        var profile = Directory.CreateTempSubdirectory("auditsvc-chromium-").FullName;
        var browser = Process.Start(Chromium.StartInfo(profile, ["--remote-debugging-port=0", "about:blank"]))!;
        browser.OutputDataReceived += (_, _) => { };
        browser.ErrorDataReceived += (_, _) => { };
        browser.BeginOutputReadLine();
        browser.BeginErrorReadLine();
        var tools = new DevTools(browser, profile);
        try
        {
            // Chromium writes the port it chose into the profile; wait for it (a guard against a hang, not a timing check).
            var portFile = Path.Combine(profile, "DevToolsActivePort");
            var guard = Stopwatch.StartNew();
            while (!File.Exists(portFile) || new FileInfo(portFile).Length == 0)
            {
                if (browser.HasExited || guard.Elapsed > TimeSpan.FromMinutes(1)) throw new InvalidOperationException("chromium did not open its debugging port");
                await Task.Delay(50);
            }
            var port = int.Parse((await File.ReadAllLinesAsync(portFile))[0], System.Globalization.CultureInfo.InvariantCulture);
            using var http = new HttpClient { BaseAddress = new Uri($"http://127.0.0.1:{port}") };
            var targets = await http.GetFromJsonAsync<JsonElement>("/json/list");
            var page = targets.EnumerateArray().First(t => t.GetProperty("type").GetString() == "page");
            await tools._socket.ConnectAsync(new Uri(page.GetProperty("webSocketDebuggerUrl").GetString()!), CancellationToken.None);
            return tools;
        }
        catch
        {
            await tools.DisposeAsync();
            throw;
        }
    }

    /// <summary>Sends a command and returns its result; events that arrive meanwhile are kept for <see cref="WaitForEventAsync"/>.</summary>
    public async Task<JsonElement> SendAsync(string method, object? parameters = null)
    {
        var id = ++_nextId;
        var bytes = JsonSerializer.SerializeToUtf8Bytes(new { id, method, @params = parameters ?? new { } });
        await _socket.SendAsync(bytes, WebSocketMessageType.Text, endOfMessage: true, CancellationToken.None);
        while (true)
        {
            var message = await ReceiveAsync();
            if (message.TryGetProperty("id", out var got) && got.GetInt32() == id)
            {
                if (message.TryGetProperty("error", out var error)) throw new InvalidOperationException($"{method}: {error}");
                return message.GetProperty("result");
            }
            if (message.TryGetProperty("method", out _)) _events.Add(message);
        }
    }

    public async Task WaitForEventAsync(string method)
    {
        while (true)
        {
            var seen = _events.FindIndex(e => e.GetProperty("method").GetString() == method);
            if (seen >= 0)
            {
                _events.RemoveAt(seen);
                return;
            }
            var message = await ReceiveAsync();
            if (message.TryGetProperty("method", out _)) _events.Add(message);
        }
    }

    /// <summary>Navigates and waits for the load event.</summary>
    public async Task NavigateAsync(Uri url)
    {
        _events.RemoveAll(e => e.GetProperty("method").GetString() == "Page.loadEventFired");
        await SendAsync("Page.navigate", new { url = url.ToString() });
        await WaitForEventAsync("Page.loadEventFired");
    }

    public async Task<string> EvaluateAsync(string expression) =>
        (await SendAsync("Runtime.evaluate", new { expression, returnByValue = true, awaitPromise = true })).GetProperty("result").GetProperty("value").ToString();

    /// <summary>Runs a script that leads to a new page (a click, a form submission) and waits for that page's load event.</summary>
    public async Task FollowAsync(string script)
    {
        _events.RemoveAll(e => e.GetProperty("method").GetString() == "Page.loadEventFired");
        await SendAsync("Runtime.evaluate", new { expression = script });
        await WaitForEventAsync("Page.loadEventFired");
    }

    /// <summary>The window a reviewer's laptop shows (CSS pixels).</summary>
    public Task ViewportAsync(int width, int height) =>
        SendAsync("Emulation.setDeviceMetricsOverride", new { width, height, deviceScaleFactor = 1, mobile = false });

    /// <summary>A PNG of the page region starting at <paramref name="top"/> (CSS pixels), the page's full width.</summary>
    public async Task<byte[]> ScreenshotAsync(double top, double height)
    {
        var width = double.Parse(await EvaluateAsync("String(document.documentElement.scrollWidth)"), System.Globalization.CultureInfo.InvariantCulture);
        var shot = await SendAsync("Page.captureScreenshot", new
        {
            format = "png",
            captureBeyondViewport = true,
            clip = new { x = 0, y = top, width, height, scale = 1 },
        });
        return Convert.FromBase64String(shot.GetProperty("data").GetString()!);
    }

    private async Task<JsonElement> ReceiveAsync()
    {
        using var buffer = new MemoryStream();
        var chunk = new byte[64 * 1024];
        using var guard = new CancellationTokenSource(TimeSpan.FromMinutes(2)); // against a hang, not a timing check
        WebSocketReceiveResult r;
        do
        {
            r = await _socket.ReceiveAsync(chunk, guard.Token);
            if (r.MessageType == WebSocketMessageType.Close) throw new InvalidOperationException("chromium closed the DevTools connection");
            buffer.Write(chunk, 0, r.Count);
        } while (!r.EndOfMessage);
        return JsonDocument.Parse(Encoding.UTF8.GetString(buffer.GetBuffer(), 0, (int)buffer.Length)).RootElement.Clone();
    }

    public async ValueTask DisposeAsync()
    {
        _socket.Dispose();
        if (!_browser.HasExited) _browser.Kill(entireProcessTree: true);
        await _browser.WaitForExitAsync();
        _browser.Dispose();
        Chromium.TryDelete(_profile);
    }
}
