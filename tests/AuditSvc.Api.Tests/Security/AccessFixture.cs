using System.Net.Http.Headers;
using System.Text.Json;
using AuditSvc.Api.Tests.Audits;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Api.Tests.Ui;
using AuditSvc.Data.Teams;

namespace AuditSvc.Api.Tests.Security;

/// <summary>
/// One service for the access tests: team A owns a model, an image set and a finished audit;
/// team B has a key of its own, and a third key of team A is revoked before any test runs.
/// </summary>
public sealed class AccessFixture : IAsyncLifetime
{
    private ServiceUnderTest? _svc;

    public ServiceUnderTest Svc => _svc ?? throw new InvalidOperationException("no database (AUDITSVC_TEST_DB)");
    public HttpClient OwnerApi { get; private set; } = null!;
    public HttpClient OtherApi { get; private set; } = null!;
    public string OwnerKey { get; private set; } = "";
    public string OtherKey { get; private set; } = "";
    public string RevokedKey { get; private set; } = "";
    public Guid ModelId { get; private set; }
    public Guid ImageSetId { get; private set; }
    public Guid AuditId { get; private set; }
    /// <summary>Team A's image set folder, relative to the artifact root (what the folder route would take).</summary>
    public string ImageSetFolder { get; private set; } = "";

    /// <summary>Every id of team A that must never show up in an answer to team B.</summary>
    public IEnumerable<Guid> OwnerIds => [ModelId, ImageSetId, AuditId];

    public async Task InitializeAsync()
    {
        if (TestDatabase.AdminConnectionString is null) return; // the [PgFact]s skip (or fail under CI) on their own
        _svc = await ServiceUnderTest.StartAsync(workers: 1);
        (OwnerKey, _) = await BrowserSession.KeyAsync(_svc, "team-a", "owner");
        (OtherKey, _) = await BrowserSession.KeyAsync(_svc, "team-b", "other");
        var (revoked, info) = await BrowserSession.KeyAsync(_svc, "team-a", "leaver");
        RevokedKey = revoked;
        OwnerApi = Client(OwnerKey);
        OtherApi = Client(OtherKey);

        var model = await Uploads.ModelAsync(OwnerApi);
        var set = await Uploads.ImageSetAsync(OwnerApi, 3);
        ModelId = model.GetProperty("id").GetGuid();
        ImageSetId = set.GetProperty("id").GetGuid();
        AuditId = await AuditEndpointsTests.SubmitAsync(OwnerApi, model, set, 2);
        var end = await _svc.WaitForEndAsync(OwnerApi, AuditId);
        if (end.State != "done") throw new InvalidOperationException($"fixture audit ended {end.State}: {end.Error}");
        await using (var conn = await _svc.Db.DataSource.OpenConnectionAsync())
        await using (var cmd = new Npgsql.NpgsqlCommand("SELECT relative_path FROM image_sets WHERE id = $1", conn))
        {
            cmd.Parameters.Add(new Npgsql.NpgsqlParameter { Value = ImageSetId });
            ImageSetFolder = (string)(await cmd.ExecuteScalarAsync())!;
        }
        // Used once, then revoked: what the tests see is a key that worked a moment ago.
        using (var before = Client(RevokedKey))
        {
            using var ok = await before.GetAsync("/api/audits");
            if (!ok.IsSuccessStatusCode) throw new InvalidOperationException("the key to revoke did not work before revocation");
        }
        await new ApiKeyStore(_svc.Db.DataSource).RevokeAsync(info.Prefix, CancellationToken.None);
    }

    public HttpClient Client(string? key)
    {
        var client = new HttpClient(new HttpClientHandler { AllowAutoRedirect = false, UseCookies = false }) { BaseAddress = Svc.Address };
        if (key is not null) client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);
        return client;
    }

    public static StringContent Json(object body) => new(JsonSerializer.Serialize(body), System.Text.Encoding.UTF8, "application/json");

    public async Task DisposeAsync()
    {
        OwnerApi?.Dispose();
        OtherApi?.Dispose();
        if (_svc is not null) await _svc.DisposeAsync();
    }
}
