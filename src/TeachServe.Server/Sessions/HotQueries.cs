using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Experiments;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Sessions;

/// <summary>The key hashes of a project, for checking an owner or embed key.</summary>
public sealed record ProjectKeyHashes(byte[] OwnerKeyHash, byte[] EmbedKeyHash);

/// <summary>
/// The reads of the annotator paths (every request, every session start, every session end). Reads by key on
/// SQLite go through <see cref="SqliteRowReader{TEntity}"/> (prepared, pooled); the others are EF compiled queries:
/// the LINQ expression is translated once instead of being parsed, hashed and looked up in the query cache on every
/// call (profiling showed that at ~7% of the server's CPU under load). A compiled query keeps the model of the first
/// context it ran on, so each query is compiled once per provider's context type.
/// </summary>
public static class HotQueries
{
    /// <summary>The session row, untracked.</summary>
    public static Task<Session?> SessionAsync(TeachServeDb db, SqliteRowReader<Session> sqliteRows, string id, CancellationToken ct) => db switch
    {
        SqliteTeachServeDb => Task.FromResult(sqliteRows.Read(id)),
        PostgresTeachServeDb postgres => Compiled<PostgresTeachServeDb>.Session(postgres, id, ct),
        _ => Compiled<TeachServeDb>.Session(db, id, ct),
    };

    /// <summary>The owner and embed key hashes of a project; null if there is no such project.</summary>
    public static Task<ProjectKeyHashes?> ProjectKeysAsync(TeachServeDb db, SqliteRowReader<Project> sqliteRows, string projectId, CancellationToken ct) => db switch
    {
        SqliteTeachServeDb => Task.FromResult(sqliteRows.Read(projectId) is { } p ? new ProjectKeyHashes(p.OwnerKeyHash, p.EmbedKeyHash) : null),
        PostgresTeachServeDb postgres => Compiled<PostgresTeachServeDb>.ProjectKeys(postgres, projectId, ct),
        _ => Compiled<TeachServeDb>.ProjectKeys(db, projectId, ct),
    };

    /// <summary>The project row, untracked; null if there is no such project.</summary>
    public static Task<Project?> ProjectAsync(TeachServeDb db, SqliteRowReader<Project> sqliteRows, string projectId, CancellationToken ct) => db switch
    {
        SqliteTeachServeDb => Task.FromResult(sqliteRows.Read(projectId)),
        PostgresTeachServeDb postgres => Compiled<PostgresTeachServeDb>.Project(postgres, projectId, ct),
        _ => Compiled<TeachServeDb>.Project(db, projectId, ct),
    };

    /// <summary>The worker's active session in the project (tracked: the caller may change it), if any.</summary>
    public static Task<Session?> ActiveSessionAsync(TeachServeDb db, string projectId, string workerRef, CancellationToken ct) => db switch
    {
        SqliteTeachServeDb sqlite => Compiled<SqliteTeachServeDb>.ActiveSession(sqlite, projectId, workerRef, ct),
        PostgresTeachServeDb postgres => Compiled<PostgresTeachServeDb>.ActiveSession(postgres, projectId, workerRef, ct),
        _ => Compiled<TeachServeDb>.ActiveSession(db, projectId, workerRef, ct),
    };

    /// <summary>The number of the project's newest ready model version; null if none is ready.</summary>
    public static Task<int?> NewestReadyVersionAsync(TeachServeDb db, string projectId, CancellationToken ct) => db switch
    {
        SqliteTeachServeDb sqlite => Compiled<SqliteTeachServeDb>.NewestReadyVersion(sqlite, projectId, ct),
        PostgresTeachServeDb postgres => Compiled<PostgresTeachServeDb>.NewestReadyVersion(postgres, projectId, ct),
        _ => Compiled<TeachServeDb>.NewestReadyVersion(db, projectId, ct),
    };

    /// <summary>The project's running experiment, untracked, if any.</summary>
    public static Task<Experiment?> RunningExperimentAsync(TeachServeDb db, string projectId, CancellationToken ct) => db switch
    {
        SqliteTeachServeDb sqlite => Compiled<SqliteTeachServeDb>.RunningExperiment(sqlite, projectId, ct),
        PostgresTeachServeDb postgres => Compiled<PostgresTeachServeDb>.RunningExperiment(postgres, projectId, ct),
        _ => Compiled<TeachServeDb>.RunningExperiment(db, projectId, ct),
    };

    /// <summary>One set of compiled queries per context type (a static generic class is instantiated per type).</summary>
    private static class Compiled<TDb> where TDb : TeachServeDb
    {
        public static readonly Func<TDb, string, CancellationToken, Task<Session?>> Session =
            EF.CompileAsyncQuery((TDb db, string id, CancellationToken ct) =>
                db.Sessions.AsNoTracking().FirstOrDefault(s => s.Id == id));

        public static readonly Func<TDb, string, CancellationToken, Task<ProjectKeyHashes?>> ProjectKeys =
            EF.CompileAsyncQuery((TDb db, string id, CancellationToken ct) =>
                db.Projects.AsNoTracking().Where(p => p.Id == id)
                    .Select(p => new ProjectKeyHashes(p.OwnerKeyHash, p.EmbedKeyHash)).FirstOrDefault());

        public static readonly Func<TDb, string, CancellationToken, Task<Project?>> Project =
            EF.CompileAsyncQuery((TDb db, string id, CancellationToken ct) =>
                db.Projects.AsNoTracking().FirstOrDefault(p => p.Id == id));

        public static readonly Func<TDb, string, string, CancellationToken, Task<Session?>> ActiveSession =
            EF.CompileAsyncQuery((TDb db, string projectId, string workerRef, CancellationToken ct) =>
                db.Sessions.FirstOrDefault(s => s.ProjectId == projectId && s.WorkerRef == workerRef && s.IsActive));

        public static readonly Func<TDb, string, CancellationToken, Task<int?>> NewestReadyVersion =
            EF.CompileAsyncQuery((TDb db, string projectId, CancellationToken ct) =>
                db.ModelVersions.Where(v => v.ProjectId == projectId && v.Status == VersionStatuses.Ready)
                    .Max(v => (int?)v.Number));

        public static readonly Func<TDb, string, CancellationToken, Task<Experiment?>> RunningExperiment =
            EF.CompileAsyncQuery((TDb db, string projectId, CancellationToken ct) =>
                db.Set<Experiment>().AsNoTracking()
                    .FirstOrDefault(e => e.ProjectId == projectId && e.Status == ExperimentStatuses.Running));
    }
}
