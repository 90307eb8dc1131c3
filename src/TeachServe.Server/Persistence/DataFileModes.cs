using Microsoft.Data.Sqlite;

namespace TeachServe.Server.Persistence;

/// <summary>
/// The SQLite files hold every project's truth, webhook secrets and the data-protection key ring that signs
/// console cookies, so on Unix they are readable by the server's user only: the data folder 700, the database
/// and its -wal and -shm files 600, whatever the process umask says.
/// </summary>
/// <remarks>
/// SQLite creates the -wal and -shm files with the permissions of the database file (sqlite.org, "Files Used By
/// SQLite" / the unix VFS; from memory), so the database file is created empty with mode 600 before SQLite first
/// opens it; an empty file is a valid empty database. Files and a data folder left by an older server with wider
/// modes are narrowed at start. A folder the operator named through a connection string is not changed (it may be
/// shared); only the files in it are.
/// </remarks>
public static class DataFileModes
{
    public const UnixFileMode Folder = UnixFileMode.UserRead | UnixFileMode.UserWrite | UnixFileMode.UserExecute;
    public const UnixFileMode File = UnixFileMode.UserRead | UnixFileMode.UserWrite;

    public static readonly string[] Suffixes = ["", "-wal", "-shm", "-journal"];

    /// <param name="connectionString">The SQLite connection string in use.</param>
    /// <param name="dataDirectory">The server's own data folder, when the database lives in it (created and narrowed), else null.</param>
    public static void Prepare(string connectionString, string? dataDirectory)
    {
        if (dataDirectory is not null)
        {
            var folder = Path.GetFullPath(dataDirectory);
            if (OperatingSystem.IsWindows()) Directory.CreateDirectory(folder);
            else if (!Directory.Exists(folder)) Directory.CreateDirectory(folder, Folder);
            else System.IO.File.SetUnixFileMode(folder, Folder);
        }
        if (OperatingSystem.IsWindows()) return;

        var builder = new SqliteConnectionStringBuilder(connectionString);
        var path = builder.DataSource;
        if (string.IsNullOrEmpty(path) || path == ":memory:" || builder.Mode == SqliteOpenMode.Memory || path.StartsWith("file:", StringComparison.Ordinal))
            return;
        path = Path.GetFullPath(path);
        if (!System.IO.File.Exists(path) && Directory.Exists(Path.GetDirectoryName(path)))
        {
            using var created = new FileStream(path, new FileStreamOptions
            {
                Mode = FileMode.CreateNew, Access = FileAccess.Write, Share = FileShare.ReadWrite, UnixCreateMode = File,
            });
        }
        foreach (var suffix in Suffixes)
        {
            if (System.IO.File.Exists(path + suffix)) System.IO.File.SetUnixFileMode(path + suffix, File);
        }
    }
}
