namespace AuditSvc.Data.Tests;

/// <summary>
/// A test that needs the PostgreSQL cluster tests/run.sh starts. Without AUDITSVC_TEST_DB it is skipped
/// with a message, except under CI=true, where it runs and fails (a missing database must not look green).
/// </summary>
public sealed class PgFactAttribute : FactAttribute
{
    public PgFactAttribute()
    {
        if (TestDatabase.AdminConnectionString is null && !TestDatabase.InCi)
            Skip = "AUDITSVC_TEST_DB is not set: run tests/run.sh, which starts a private PostgreSQL for the tests.";
    }
}

/// <summary>A theory that needs the PostgreSQL cluster, skipped or failed exactly like <see cref="PgFactAttribute"/>.</summary>
public sealed class PgTheoryAttribute : TheoryAttribute
{
    public PgTheoryAttribute()
    {
        if (TestDatabase.AdminConnectionString is null && !TestDatabase.InCi)
            Skip = "AUDITSVC_TEST_DB is not set: run tests/run.sh, which starts a private PostgreSQL for the tests.";
    }
}
