using AuditSvc.Core.ImageSets;
using AuditSvc.Data.Audits;
using AuditSvc.Data.ImageSets;
using AuditSvc.Data.Models;
using AuditSvc.Data.Teams;

namespace AuditSvc.Data.Tests;

/// <summary>A team with a model and an image set of <c>items</c> rows, enough to make audits.</summary>
internal sealed record Seed(Team Team, ModelRow Model, ImageSetRow Set)
{
    public static async Task<Seed> CreateAsync(TestDatabase db, string teamName, int items = 10)
    {
        var ct = CancellationToken.None;
        var team = await new TeamStore(db.DataSource).EnsureAsync(teamName, ct);
        var model = await new ModelStore(db.DataSource).AddAsync(team.Id, "m", "sha256:aa", "models/aa.onnx", "{}", "[]", ct);
        var rows = Enumerable.Range(0, items)
            .Select(i => new ImageItem(i, i + 1, $"/x/{i}.png", $"{i}.png", i % 2, [i % 3], $"h{i}")).ToList();
        var set = await new ImageSetStore(db.DataSource).AddAsync(team.Id, "s", "sha256:bb", "sets/bb", "[\"a\",\"b\"]", "[]", "{}", rows, "/x", ct);
        return new Seed(team, model, set);
    }

    public async Task<AuditRow> AuditAsync(TestDatabase db, int chunkSize) =>
        (await new AuditStore(db.DataSource).CreateAsync(Team.Id, Model.Id, Set.Id, Set.ItemCount, chunkSize, "{}", CancellationToken.None))!;
}
