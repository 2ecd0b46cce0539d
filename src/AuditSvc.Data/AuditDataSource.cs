using Npgsql;

namespace AuditSvc.Data;

/// <summary>Builds the one <see cref="NpgsqlDataSource"/> a process uses; every store shares it.</summary>
public static class AuditDataSource
{
    public static NpgsqlDataSource Create(string connectionString, string applicationName = "auditsvc")
    {
        var csb = new NpgsqlConnectionStringBuilder(connectionString);
        if (string.IsNullOrEmpty(csb.ApplicationName)) csb.ApplicationName = applicationName;
        var builder = new NpgsqlDataSourceBuilder(csb.ConnectionString);
        return builder.Build();
    }
}
