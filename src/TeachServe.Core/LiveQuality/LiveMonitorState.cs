using System.Buffers.Binary;

namespace TeachServe.Core.LiveQuality;

/// <summary>
/// One annotator's drift-monitor state: a handful of integers, so a server can keep it on the annotator's row and
/// update it one live check at a time (<see cref="LiveMonitor.Apply"/>), or rebuild it from the outcome log
/// (<see cref="LiveMonitor.Replay"/>). Immutable: every step returns a new state.
/// </summary>
public sealed class LiveMonitorState : IEquatable<LiveMonitorState>
{
    private const byte FormatVersion = 1;

    internal LiveMonitorState(LiveStatus status, int checks, int errors, int cusum, int mixtureChecks, int mixtureErrors, int alarms, int[] candidates, int[] candidateStatistics)
    {
        Status = status;
        Checks = checks;
        Errors = errors;
        Cusum = cusum;
        MixtureChecks = mixtureChecks;
        MixtureErrors = mixtureErrors;
        Alarms = alarms;
        CandidateRules = candidates;
        CandidateStatistics = candidateStatistics;
    }

    public LiveStatus Status { get; }

    /// <summary>Live checks recorded since release.</summary>
    public int Checks { get; }

    /// <summary>Of those, answered wrong.</summary>
    public int Errors { get; }

    /// <summary>The count CUSUM's statistic in lattice steps (<see cref="BernoulliCusumDesign"/>).</summary>
    public int Cusum { get; }

    /// <summary>Checks and errors since the always-valid test last restarted.</summary>
    public int MixtureChecks { get; }

    /// <summary>Errors since the always-valid test last restarted.</summary>
    public int MixtureErrors { get; }

    /// <summary>Alarms raised since release.</summary>
    public int Alarms { get; }

    /// <summary>The hypotheses watched by the candidate-rule CUSUMs (chosen at release).</summary>
    public IReadOnlyList<int> CandidateRules { get; }

    /// <summary>Each candidate-rule CUSUM's statistic, in units of its weight.</summary>
    public IReadOnlyList<int> CandidateStatistics { get; }

    /// <summary>A compact binary form (about 30 bytes plus 8 per candidate rule).</summary>
    public byte[] ToBytes()
    {
        var buffer = new byte[1 + (7 * 4) + (CandidateRules.Count * 8)];
        buffer[0] = FormatVersion;
        var span = buffer.AsSpan(1);
        int[] fields = [(int)Status, Checks, Errors, Cusum, MixtureChecks, MixtureErrors, Alarms];
        foreach (var f in fields)
        {
            BinaryPrimitives.WriteInt32LittleEndian(span, f);
            span = span[4..];
        }

        for (var i = 0; i < CandidateRules.Count; i++)
        {
            BinaryPrimitives.WriteInt32LittleEndian(span, CandidateRules[i]);
            BinaryPrimitives.WriteInt32LittleEndian(span[4..], CandidateStatistics[i]);
            span = span[8..];
        }

        // The candidate count is implied by the length, which the header's fixed size makes unambiguous.
        return buffer;
    }

    /// <exception cref="FormatException">Not a state written by <see cref="ToBytes"/>.</exception>
    public static LiveMonitorState FromBytes(ReadOnlySpan<byte> bytes)
    {
        const int header = 1 + (7 * 4);
        if (bytes.Length < header || bytes[0] != FormatVersion || (bytes.Length - header) % 8 != 0)
        {
            throw new FormatException("Not a live-monitor state of a known format.");
        }

        var span = bytes[1..];
        var fields = new int[7];
        for (var i = 0; i < fields.Length; i++)
        {
            fields[i] = BinaryPrimitives.ReadInt32LittleEndian(span);
            span = span[4..];
        }

        if (!Enum.IsDefined((LiveStatus)fields[0]) || fields.Skip(1).Any(f => f < 0) || fields[2] > fields[1] || fields[5] > fields[4])
        {
            throw new FormatException("The live-monitor state holds impossible values.");
        }

        var count = span.Length / 8;
        var rules = new int[count];
        var statistics = new int[count];
        for (var i = 0; i < count; i++)
        {
            rules[i] = BinaryPrimitives.ReadInt32LittleEndian(span);
            statistics[i] = BinaryPrimitives.ReadInt32LittleEndian(span[4..]);
            span = span[8..];
            if (rules[i] < 0 || statistics[i] < 0)
            {
                throw new FormatException("The live-monitor state holds impossible values.");
            }
        }

        return new LiveMonitorState((LiveStatus)fields[0], fields[1], fields[2], fields[3], fields[4], fields[5], fields[6], rules, statistics);
    }

    public string ToBase64() => Convert.ToBase64String(ToBytes());

    public static LiveMonitorState FromBase64(string text) => FromBytes(Convert.FromBase64String(text));

    public bool Equals(LiveMonitorState? other) =>
        other is not null && ToBytes().AsSpan().SequenceEqual(other.ToBytes());

    public override bool Equals(object? obj) => Equals(obj as LiveMonitorState);

    public override int GetHashCode() => HashCode.Combine(Status, Checks, Errors, Cusum, MixtureChecks, Alarms);
}
