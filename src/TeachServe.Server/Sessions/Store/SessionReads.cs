using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Experiments;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Sessions.Store;

/// <summary>The key hashes of a project, for checking an owner or embed key.</summary>
public sealed record ProjectKeyHashes(byte[] OwnerKeyHash, byte[] EmbedKeyHash);

/// <summary>
/// The reads of the annotator paths (every request, every session start, every session end), for the provider
/// chosen once when the server starts (<see cref="For"/>). On SQLite the reads by key go through
/// <see cref="SqliteRowReader{TEntity}"/> (prepared, pooled); the others are EF compiled queries: the LINQ expression
/// is translated once instead of being parsed, hashed and looked up in the query cache on every call (profiling
/// showed that at ~7% of the server's CPU under load). A compiled query keeps the model of the first context it ran
/// on, so each query is compiled for the provider's own context type.
/// </summary>
public abstract class SessionReads : IDisposable
{
    /// <summary>The reads of the configured provider; the context handed to every read must be of that provider.</summary>
    public static SessionReads For(TeachServeOptions options, IServiceScopeFactory scopes) =>
        options.Database.Provider == DatabaseProviders.Postgres ? new Compiled<PostgresTeachServeDb>() : new OnSqlite(scopes);

    /// <summary>The session row, untracked.</summary>
    public abstract Task<Session?> SessionAsync(TeachServeDb db, string id, CancellationToken ct);

    /// <summary>The owner and embed key hashes of a project; null if there is no such project.</summary>
    public abstract Task<ProjectKeyHashes?> ProjectKeysAsync(TeachServeDb db, string projectId, CancellationToken ct);

    /// <summary>The project row, untracked; null if there is no such project.</summary>
    public abstract Task<Project?> ProjectAsync(TeachServeDb db, string projectId, CancellationToken ct);

    /// <summary>The worker's active session in the project (tracked: the caller may change it), if any.</summary>
    public abstract Task<Session?> ActiveSessionAsync(TeachServeDb db, string projectId, string workerRef, CancellationToken ct);

    /// <summary>The number of the project's newest ready model version; null if none is ready.</summary>
    public abstract Task<int?> NewestReadyVersionAsync(TeachServeDb db, string projectId, CancellationToken ct);

    /// <summary>The project's running experiment, untracked, if any.</summary>
    public abstract Task<Experiment?> RunningExperimentAsync(TeachServeDb db, string projectId, CancellationToken ct);

    public void Dispose()
    {
        Dispose(true);
        GC.SuppressFinalize(this);
    }

    protected virtual void Dispose(bool disposing)
    {
    }

    /// <summary>Every read as an EF compiled query on the context type <typeparamref name="TDb"/>.</summary>
    private class Compiled<TDb> : SessionReads where TDb : TeachServeDb
    {
        private static readonly Func<TDb, string, CancellationToken, Task<Session?>> Session =
            EF.CompileAsyncQuery((TDb db, string id, CancellationToken ct) =>
                db.Sessions.AsNoTracking().FirstOrDefault(s => s.Id == id));

        private static readonly Func<TDb, string, CancellationToken, Task<ProjectKeyHashes?>> ProjectKeys =
            EF.CompileAsyncQuery((TDb db, string id, CancellationToken ct) =>
                db.Projects.AsNoTracking().Where(p => p.Id == id)
                    .Select(p => new ProjectKeyHashes(p.OwnerKeyHash, p.EmbedKeyHash)).FirstOrDefault());

        private static readonly Func<TDb, string, CancellationToken, Task<Project?>> Project =
            EF.CompileAsyncQuery((TDb db, string id, CancellationToken ct) =>
                db.Projects.AsNoTracking().FirstOrDefault(p => p.Id == id));

        private static readonly Func<TDb, string, string, CancellationToken, Task<Session?>> ActiveSession =
            EF.CompileAsyncQuery((TDb db, string projectId, string workerRef, CancellationToken ct) =>
                db.Sessions.FirstOrDefault(s => s.ProjectId == projectId && s.WorkerRef == workerRef && s.IsActive));

        private static readonly Func<TDb, string, CancellationToken, Task<int?>> NewestReadyVersion =
            EF.CompileAsyncQuery((TDb db, string projectId, CancellationToken ct) =>
                db.ModelVersions.Where(v => v.ProjectId == projectId && v.Status == VersionStatuses.Ready)
                    .Max(v => (int?)v.Number));

        private static readonly Func<TDb, string, CancellationToken, Task<Experiment?>> RunningExperiment =
            EF.CompileAsyncQuery((TDb db, string projectId, CancellationToken ct) =>
                db.Set<Experiment>().AsNoTracking()
                    .FirstOrDefault(e => e.ProjectId == projectId && e.Status == ExperimentStatuses.Running));

        public override Task<Session?> SessionAsync(TeachServeDb db, string id, CancellationToken ct) => Session(Of(db), id, ct);

        public override Task<ProjectKeyHashes?> ProjectKeysAsync(TeachServeDb db, string projectId, CancellationToken ct) =>
            ProjectKeys(Of(db), projectId, ct);

        public override Task<Project?> ProjectAsync(TeachServeDb db, string projectId, CancellationToken ct) => Project(Of(db), projectId, ct);

        public override Task<Session?> ActiveSessionAsync(TeachServeDb db, string projectId, string workerRef, CancellationToken ct) =>
            ActiveSession(Of(db), projectId, workerRef, ct);

        public override Task<int?> NewestReadyVersionAsync(TeachServeDb db, string projectId, CancellationToken ct) =>
            NewestReadyVersion(Of(db), projectId, ct);

        public override Task<Experiment?> RunningExperimentAsync(TeachServeDb db, string projectId, CancellationToken ct) =>
            RunningExperiment(Of(db), projectId, ct);

        /// <summary>A context of another provider than the one chosen at start is a wiring fault, not a case to serve.</summary>
        private static TDb Of(TeachServeDb db) => db as TDb
            ?? throw new InvalidOperationException($"The reads were set up for {typeof(TDb).Name}, but got a {db.GetType().Name}.");
    }

    /// <summary>SQLite: the reads by key from pooled connections with prepared statements, the rest compiled.</summary>
    private sealed class OnSqlite(IServiceScopeFactory scopes) : Compiled<SqliteTeachServeDb>
    {
        private readonly SqliteRowReader<Session> _sessions = new(scopes);
        private readonly SqliteRowReader<Project> _projects = new(scopes);

        public override Task<Session?> SessionAsync(TeachServeDb db, string id, CancellationToken ct) =>
            Task.FromResult(_sessions.Read(id));

        public override Task<ProjectKeyHashes?> ProjectKeysAsync(TeachServeDb db, string projectId, CancellationToken ct) =>
            Task.FromResult(_projects.Read(projectId) is { } p ? new ProjectKeyHashes(p.OwnerKeyHash, p.EmbedKeyHash) : null);

        public override Task<Project?> ProjectAsync(TeachServeDb db, string projectId, CancellationToken ct) =>
            Task.FromResult(_projects.Read(projectId));

        protected override void Dispose(bool disposing)
        {
            if (disposing)
            {
                _sessions.Dispose();
                _projects.Dispose();
            }
            base.Dispose(disposing);
        }
    }
}
