using TeachServe.Core.Fitting;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Simulation;
using TeachServe.Core.Teaching;

namespace TeachServe.Core.Tests.Support;

/// <summary>
/// Records sessions of simulated learners (the assumed keep-or-redraw learner with known alpha and lapse) driven
/// through <see cref="SessionRun"/>, exactly as the server would record them.
/// </summary>
internal static class SimulatedSessions
{
    /// <summary>
    /// A gate that teaches every teach item (random order) and then tests on every test item without feedback:
    /// the longest records a model allows, for fitting.
    /// </summary>
    public static SessionOptions TeachAllThenTestAll(ModelVersion model) => new()
    {
        Policy = PolicyNames.Random,
        Gate = new GateSettings
        {
            TargetError = 0.001,
            Confidence = 0.999,
            MaxTeachingItems = model.TeachCount,
            Retakes = 0,
            Test = new TestSettings { Mode = TestModes.Fixed, MaxItems = model.TestCount },
        },
    };

    public static RecordedSession[] Record(ModelVersion model, SessionOptions options, double alpha, double lapse, int count, ulong seed)
    {
        var sessions = new RecordedSession[count];
        for (var i = 0; i < count; i++)
        {
            var learner = new SimulatedLearner(model, LearnerVariant.Assumed, alpha, lapse, options.Gate.TargetError, new SeededRandom(SeededRandom.Derive(seed, (ulong)i)));
            var run = SessionRun.Start(model, options with { Seed = SeededRandom.Derive(seed ^ 0xF17, (ulong)i) });
            var steps = new List<RecordedStep>();
            double? predicted = run.Phase == SessionPhase.Testing ? run.PredictedError : null;
            while (!run.IsEnded)
            {
                var item = run.CurrentItem;
                var teaching = run.Phase == SessionPhase.Teaching;
                var label = learner.Answer(item);
                var outcome = run.Answer(label);
                steps.Add(new RecordedStep(item, label, teaching));
                if (teaching)
                {
                    learner.SeeFeedback(item);
                }

                if (outcome.PhaseChanged && outcome.Phase == SessionPhase.Testing)
                {
                    predicted = outcome.PredictedError;
                }
            }

            sessions[i] = new RecordedSession(steps) { PredictedError = predicted };
        }

        return sessions;
    }
}
