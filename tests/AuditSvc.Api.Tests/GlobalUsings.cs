global using AuditSvc.Data.Tests;
