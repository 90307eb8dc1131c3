namespace TeachServe.Server.Sessions;

public static class SessionLimits
{
    public const int WorkerRefLength = 200;

    /// <summary>
    /// A new onboarding session draws its first this many teaching items among those within 10 % of the adaptive
    /// policy's best gain (<see cref="Core.Teaching.SessionOptions.OpeningVariety"/>); kept in its start event, so
    /// sessions started before this setting existed replay with none.
    /// </summary>
    public const int OpeningVariety = 3;
}
