using System.Buffers.Binary;

namespace TeachServe.Core.LiveQuality;

/// <summary>
/// One annotator's drift-monitor state: a handful of integers, so a server can keep it on the annotator's row and
/// update it one live check at a time (<see cref="LiveMonitor.Apply"/>), or rebuild it from the outcome log
/// (<see cref="LiveMonitor.Replay"/>). Immutable: every step returns a new state.
/// </summary>
public sealed class LiveMonitorState : IEquatable<LiveMonitorState>
{
    /// <summary>The first format, still written when the item-aware CUSUM is off, so stored states keep their bytes.</summary>
    private const byte FormatVersion = 1;

    /// <summary>The format with the item-aware CUSUM's statistics (a count, then one double per alternative).</summary>
    private const byte FormatVersionItemAware = 2;

    private const int Header = 1 + (7 * 4);

    internal LiveMonitorState(LiveStatus status, int checks, int errors, int cusum, int mixtureChecks, int mixtureErrors, int alarms, int[] candidates, int[] candidateStatistics, double[]? itemAwareStatistics = null)
    {
        ItemAwareStatistics = itemAwareStatistics ?? [];
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

    /// <summary>The item-aware CUSUM's statistics in nats, one per drift alternative (empty when it is off).</summary>
    public IReadOnlyList<double> ItemAwareStatistics { get; }

    /// <summary>
    /// A compact binary form (about 30 bytes plus 8 per candidate rule, plus 4 + 8 per item-aware alternative). Without
    /// the item-aware CUSUM the bytes are those of the first format.
    /// </summary>
    public byte[] ToBytes()
    {
        var itemAware = ItemAwareStatistics.Count;
        var extra = itemAware > 0 ? 4 + (itemAware * 8) : 0;
        var buffer = new byte[Header + extra + (CandidateRules.Count * 8)];
        buffer[0] = itemAware > 0 ? FormatVersionItemAware : FormatVersion;
        var span = buffer.AsSpan(1);
        int[] fields = [(int)Status, Checks, Errors, Cusum, MixtureChecks, MixtureErrors, Alarms];
        foreach (var f in fields)
        {
            BinaryPrimitives.WriteInt32LittleEndian(span, f);
            span = span[4..];
        }

        if (itemAware > 0)
        {
            BinaryPrimitives.WriteInt32LittleEndian(span, itemAware);
            span = span[4..];
            foreach (var v in ItemAwareStatistics)
            {
                BinaryPrimitives.WriteDoubleLittleEndian(span, v);
                span = span[8..];
            }
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
        if (bytes.Length < Header || (bytes[0] != FormatVersion && bytes[0] != FormatVersionItemAware))
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

        var itemAware = Array.Empty<double>();
        if (bytes[0] == FormatVersionItemAware)
        {
            var count = span.Length >= 4 ? BinaryPrimitives.ReadInt32LittleEndian(span) : -1;
            if (count < 1 || count > 64 || span.Length < 4 + (count * 8))
            {
                throw new FormatException("Not a live-monitor state of a known format.");
            }

            span = span[4..];
            itemAware = new double[count];
            for (var i = 0; i < count; i++)
            {
                itemAware[i] = BinaryPrimitives.ReadDoubleLittleEndian(span);
                span = span[8..];
                if (!(itemAware[i] >= 0) || double.IsInfinity(itemAware[i]))
                {
                    throw new FormatException("The live-monitor state holds impossible values.");
                }
            }
        }

        if (span.Length % 8 != 0)
        {
            throw new FormatException("Not a live-monitor state of a known format.");
        }

        var candidates = span.Length / 8;
        var rules = new int[candidates];
        var statistics = new int[candidates];
        for (var i = 0; i < candidates; i++)
        {
            rules[i] = BinaryPrimitives.ReadInt32LittleEndian(span);
            statistics[i] = BinaryPrimitives.ReadInt32LittleEndian(span[4..]);
            span = span[8..];
            if (rules[i] < 0 || statistics[i] < 0)
            {
                throw new FormatException("The live-monitor state holds impossible values.");
            }
        }

        return new LiveMonitorState((LiveStatus)fields[0], fields[1], fields[2], fields[3], fields[4], fields[5], fields[6], rules, statistics, itemAware);
    }

    public string ToBase64() => Convert.ToBase64String(ToBytes());

    public static LiveMonitorState FromBase64(string text) => FromBytes(Convert.FromBase64String(text));

    public bool Equals(LiveMonitorState? other) =>
        other is not null && ToBytes().AsSpan().SequenceEqual(other.ToBytes());

    public override bool Equals(object? obj) => Equals(obj as LiveMonitorState);

    public override int GetHashCode() => HashCode.Combine(Status, Checks, Errors, Cusum, MixtureChecks, Alarms);
}
