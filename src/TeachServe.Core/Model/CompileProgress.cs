namespace TeachServe.Core.Model;

/// <summary>How far a compile has got: the step under way and the overall fraction done (0 to 1).</summary>
public readonly record struct CompileProgress(string Step, double Fraction);

/// <summary>The steps of a compile, in order, with the share of the overall fraction each one spans.</summary>
public static class CompileSteps
{
    public const string Hypotheses = "hypotheses";
    public const string Mistakes = "mistake matrix";
    public const string Greedy = "stochastic-greedy order";
    public const string Cover = "cover order";
    public const string EasyFirst = "easy-first order";
    public const string Done = "done";

    /// <summary>
    /// Where each step starts on the overall scale. The shares are rough: generation dominates linear families
    /// with many features, the orders dominate tables with many hypotheses.
    /// </summary>
    internal static double Start(string step) => step switch
    {
        Hypotheses => 0.0,
        Mistakes => 0.6,
        Greedy => 0.65,
        Cover => 0.85,
        EasyFirst => 0.97,
        _ => 1.0,
    };

    internal static double End(string step) => step switch
    {
        Hypotheses => Start(Mistakes),
        Mistakes => Start(Greedy),
        Greedy => Start(Cover),
        Cover => Start(EasyFirst),
        _ => 1.0,
    };
}

/// <summary>
/// Passes a compile's progress on to an optional <see cref="IProgress{T}"/>, mapping each step's own fraction onto
/// the overall scale, and keeps the wall time of every step (the benchmark's profile reads it).
/// </summary>
public sealed class CompileProgressReporter
{
    private readonly IProgress<CompileProgress>? _target;
    private readonly System.Diagnostics.Stopwatch _watch = System.Diagnostics.Stopwatch.StartNew();
    private readonly List<(string Step, TimeSpan Elapsed)> _timings = [];
    private string? _step;
    private TimeSpan _stepStart;
    private double _lastReported = -1;

    public CompileProgressReporter(IProgress<CompileProgress>? target) => _target = target;

    /// <summary>Finished steps with their wall times, in order (a step reported in parts, e.g. generation, is listed under its sub-steps).</summary>
    public IReadOnlyList<(string Step, TimeSpan Elapsed)> Timings => _timings;

    /// <summary>Starts <paramref name="step"/> (ending the previous one). <paramref name="scaleStep"/> names the
    /// step of <see cref="CompileSteps"/> whose share of the overall scale it reports in, when it is a sub-step.</summary>
    public void Begin(string step, string? scaleStep = null, double within = 0)
    {
        End();
        _step = step;
        _stepStart = _watch.Elapsed;
        Report(scaleStep ?? step, within, force: true);
    }

    /// <summary>Reports a fraction within a step; reports closer together than 0.5 % overall are dropped.</summary>
    public void Report(string scaleStep, double within, bool force = false)
    {
        var start = CompileSteps.Start(scaleStep);
        var fraction = start + ((CompileSteps.End(scaleStep) - start) * Math.Clamp(within, 0, 1));
        if (!force && fraction - _lastReported < 0.005)
        {
            return;
        }

        _lastReported = fraction;
        _target?.Report(new CompileProgress(_step ?? scaleStep, fraction));
    }

    /// <summary>Ends the current step (if any), recording its wall time.</summary>
    public void End()
    {
        if (_step is not null)
        {
            _timings.Add((_step, _watch.Elapsed - _stepStart));
            _step = null;
        }
    }
}
