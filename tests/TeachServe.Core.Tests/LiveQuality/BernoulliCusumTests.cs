using TeachServe.Core.LiveQuality;
using TeachServe.Core.Tests.Engine;
using TeachServe.Core.Tests.Support;
using Xunit;

namespace TeachServe.Core.Tests.LiveQuality;

public sealed class BernoulliCusumTests
{
    [Fact]
    public void Exact_run_length_of_a_two_state_chart_matches_the_closed_form()
    {
        // Up = 1, Down = 1, limit 2: from 0 an error goes to 1, a right answer stays at 0; from 1 an error alarms, a
        // right answer returns to 0. L0 = 1 + p·L1 + (1−p)·L0, L1 = 1 + (1−p)·L0, so L0 = (1 + p)/p² [derived].
        foreach (var p in new[] { 0.1, 0.3, 0.7 })
        {
            AssertNear.Relative((1 + p) / (p * p), BernoulliCusum.AverageRunLength(1, 1, 2, p), 1e-10, $"p = {p}");
        }
    }

    [Theory]
    [InlineData(0.05, 0.10, 500)]
    [InlineData(0.10, 0.25, 1000)]
    [InlineData(0.175, 0.325, 200)]
    public void Design_meets_the_in_control_run_length_with_the_smallest_limit(double p0, double p1, double arl0)
    {
        var design = BernoulliCusum.Design(p0, p1, arl0);
        Assert.True(design.InControlRunLength >= arl0);
        Assert.True(BernoulliCusum.AverageRunLength(design.Up, design.Down, design.Limit - 1, p0) < arl0);
        AssertNear.Relative(Math.Log(design.DriftError / p0), design.Up * design.Unit, 1e-9, "wrong-answer weight");
        AssertNear.Relative(-Math.Log((1 - design.DriftError) / (1 - p0)), design.Down * design.Unit, 1e-9, "right-answer weight");
        AssertNear.Relative(p1, design.DriftError, 0.05, "p1 kept close to the one asked for");

        // Lorden (Ann. Math. Stat. 42, 1971): ARL0 ≥ e^h for a log-likelihood-ratio CUSUM with limit h.
        Assert.True(design.InControlRunLength >= Math.Exp(design.LimitNats));
        Assert.True(design.RunLength(design.DriftError) < design.InControlRunLength / 5);
    }

    /// <summary>
    /// The exact chain against Siegmund's corrected diffusion approximation with the Reynolds &amp; Stoumbos (1999)
    /// Bernoulli correction, on their lattice (Down = 1). Reynolds &amp; Stoumbos describe the approximation as accurate
    /// to a few per cent for designs of this kind (from memory: their tables were not in hand, so no printed ARL is
    /// checked here); the tolerance is 5 %, which fails if the overshoot correction ε(p) is left out.
    /// </summary>
    [Theory]
    [InlineData(0.01, 0.02, 3000)]
    [InlineData(0.02, 0.04, 1500)]
    [InlineData(0.05, 0.10, 600)]
    [InlineData(0.10, 0.20, 300)]
    [InlineData(0.10, 0.30, 1000)]
    public void Exact_run_length_agrees_with_the_corrected_diffusion_approximation(double p0, double p1, double arl0)
    {
        var design = BernoulliCusum.Design(p0, p1, arl0, maxDown: 1);
        Assert.Equal(1, design.Down);
        foreach (var p in new[] { p0, design.DriftError, 1.5 * design.DriftError })
        {
            var exact = design.RunLength(p);
            var approximate = BernoulliCusum.DiffusionApproximation(design, p);
            AssertNear.Relative(exact, approximate, 0.05, $"p0 {p0}, p {p}: exact {exact:F1}, approximation {approximate:F1}");
        }
    }

    [Theory]
    [InlineData(0.10, 0.25, 200, 0.10, 2000UL)]
    [InlineData(0.10, 0.25, 200, 0.25, 4000UL)]
    [InlineData(0.05, 0.15, 300, 0.15, 6000UL)]
    public void Exact_run_length_agrees_with_a_seeded_simulation(double p0, double p1, double arl0, double p, ulong seed)
    {
        var design = BernoulliCusum.Design(p0, p1, arl0);
        var random = new SeededRandom(seed);
        const int runs = 4000;
        double sum = 0, squares = 0;
        for (var r = 0; r < runs; r++)
        {
            int s = 0, n = 0;
            while (!design.Alarms(s))
            {
                s = design.Step(s, random.NextDouble() < p);
                n++;
            }

            sum += n;
            squares += (double)n * n;
        }

        var mean = sum / runs;
        var se = Math.Sqrt(((squares / runs) - (mean * mean)) / runs);
        AssertNear.Absolute(design.RunLength(p), mean, 4 * se, $"p = {p}");
    }
}

public sealed class CandidateChartDesignTests
{
    [Fact]
    public void Candidate_chart_run_length_agrees_with_a_seeded_simulation_of_in_control_answers()
    {
        // In control at p0 = 0.2 on a 3-label model: the exact single-chart ARLs combined by adding rates, against
        // 3,000 simulated runs of the monitor's own charts. The combination is exact for independent charts and
        // conservative otherwise, so the simulated ARL must be at least 0.9 of it and at most 1.6 times it.
        var model = TinyModels.Random(seed: 5, m: 24, teach: 30, test: 10, labels: 3, alpha: 1.0, lapse: 0.1);
        const double p0 = 0.2;
        var candidates = DriftCandidates.Choose(model, model.Prior, 0.15, 3);
        var limit = CandidateChartDesign.Limit(model, candidates, p0, 150);
        var predicted = CandidateChartDesign.InControlRunLength(model, candidates, p0, limit);
        Assert.True(predicted >= 150);
        Assert.True(CandidateChartDesign.InControlRunLength(model, candidates, p0, limit - 1) < 150);

        var monitor = new LiveMonitor(new LiveMonitorSettings { Cusum = BernoulliCusum.Design(0.2, 0.9, 1e6, maxDown: 1), CandidateLimit = limit }, model);
        var random = new SeededRandom(77);
        const int runs = 3000;
        double total = 0;
        for (var r = 0; r < runs; r++)
        {
            var state = monitor.Start(candidates);
            var n = 0;
            while (true)
            {
                n++;
                var item = random.NextInt(model.ItemCount);
                var truth = model.TrueLabel(item);
                var label = random.NextDouble() < p0 ? (truth + 1 + random.NextInt(2)) % 3 : truth;
                var step = monitor.Apply(state, new LiveCheck(item, label, truth));
                if ((step.Alarms & LiveAlarms.CandidateRule) != 0)
                {
                    break;
                }

                state = step.State;
            }

            total += n;
        }

        var simulated = total / runs;
        Assert.InRange(simulated, 0.9 * predicted, 1.6 * predicted);
    }

    [Fact]
    public void Run_length_with_a_stay_probability_matches_the_closed_form()
    {
        // Up = Down = 1, limit 1: alarms on the first up-step, so the run length is geometric with mean 1/pUp [derived].
        AssertNear.Relative(1 / 0.07, BernoulliCusum.AverageRunLengths(1, 1, 1, 0.07, 0.5)[0], 1e-10);

        // Staying in place only stretches time: ARL(pUp, pDown) = ARL(pUp/(pUp+pDown) as p) / (pUp + pDown) [derived].
        var p = 0.1 / (0.1 + 0.6);
        AssertNear.Relative(BernoulliCusum.AverageRunLength(2, 1, 7, p) / 0.7, BernoulliCusum.AverageRunLengths(2, 1, 7, 0.1, 0.6)[0], 1e-10);
    }
}
