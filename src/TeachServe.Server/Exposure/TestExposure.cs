namespace TeachServe.Server.Exposure;

/// <summary>
/// How many sessions of a project were shown one test item (they answered it at least once), counted in the same
/// transaction as the answer. The row whose <see cref="ItemId"/> is <see cref="TestedSessions"/> (empty: item ids
/// never are) counts the sessions that answered any test item, the denominator of every exposure rate. Counts carry
/// no worker: erasing a worker's data leaves them, as the items were shown all the same.
/// </summary>
public sealed class TestExposure
{
    public const string TestedSessions = "";

    public required string ProjectId { get; set; }
    public required string ItemId { get; set; }
    public int Sessions { get; set; }
}
