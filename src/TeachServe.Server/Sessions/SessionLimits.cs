namespace TeachServe.Server.Sessions;

public static class SessionLimits
{
    public const int WorkerRefLength = 200;
}
