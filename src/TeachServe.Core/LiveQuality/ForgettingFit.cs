using MathNet.Numerics.Distributions;
using TeachServe.Core.Fitting;
using TeachServe.Core.Model;

namespace TeachServe.Core.LiveQuality;

/// <summary>One released annotator's live record for the fit: the belief at release and the live checks since, in order.</summary>
public sealed record LiveRecord(IReadOnlyList<double> ReleaseBelief, IReadOnlyList<LiveCheck> Checks);

/// <summary>The fitted per-check forgetting rate with its profile-likelihood interval.</summary>
public sealed record ForgettingFitResult(double PerCheck, double Low, double High, double MaxLogLikelihood, int Checks);

/// <summary>
/// Maximum-likelihood per-check forgetting rate of <see cref="LiveBelief"/> from live records: the log-likelihood is the
/// forward algorithm's Σ log Σ_h β(h)·o(a|h,x) over every check of every record (as <see cref="LearnerFit"/> does for
/// teaching), maximised over the rate on [0, maxRate] by Brent's method (<see cref="BoundedMinimizer"/>); the interval is
/// where 2·(ℓmax − ℓ) ≤ χ²₁(confidence) (Wilks 1938).
/// </summary>
public static class ForgettingFit
{
    public static double LogLikelihood(ModelVersion model, double lapse, IReadOnlyList<LiveRecord> records, double perCheck)
    {
        ArgumentNullException.ThrowIfNull(records);
        var sum = 0.0;
        foreach (var record in records)
        {
            var belief = new LiveBelief(model, lapse, record.ReleaseBelief.ToArray(), new ForgettingRate(perCheck));
            foreach (var check in record.Checks)
            {
                var p = belief.Observe(check);
                if (!double.IsNaN(p))
                {
                    sum += Math.Log(p);
                }
            }
        }

        return sum;
    }

    public static ForgettingFitResult Fit(ModelVersion model, double lapse, IReadOnlyList<LiveRecord> records, double maxRate = 0.5, double confidence = 0.95)
    {
        ArgumentNullException.ThrowIfNull(records);
        if (records.Sum(r => r.Checks.Count(c => c.Item is not null)) == 0)
        {
            throw new ArgumentException("No live checks on the model's items to fit.", nameof(records));
        }

        if (!(maxRate > 0 && maxRate < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(maxRate), maxRate, "Must lie in (0, 1).");
        }

        double Ll(double r) => LogLikelihood(model, lapse, records, r);
        var best = BoundedMinimizer.Minimize(r => -Ll(r), 0, maxRate, 1e-6, 100);
        var rate = best.X;
        var max = -best.Value;
        var threshold = ChiSquared.InvCDF(1, confidence) / 2;

        // The profile is unimodal in practice; each end is found by bisection on ℓ(r) = ℓmax − threshold.
        double Edge(double inside, double outside)
        {
            if (max - Ll(outside) <= threshold)
            {
                return outside;
            }

            for (var i = 0; i < 40; i++)
            {
                var middle = 0.5 * (inside + outside);
                if (max - Ll(middle) <= threshold)
                {
                    inside = middle;
                }
                else
                {
                    outside = middle;
                }
            }

            return 0.5 * (inside + outside);
        }

        return new ForgettingFitResult(rate, Edge(rate, 0), Edge(rate, maxRate), max, records.Sum(r => r.Checks.Count));
    }
}
