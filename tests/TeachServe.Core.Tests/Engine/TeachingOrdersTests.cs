using TeachServe.Core.Model;

namespace TeachServe.Core.Tests.Engine;

public class TeachingOrdersTests
{
    /// <summary>The full scan the lazy greedy must reproduce: NextGreedy over every unshown item, each step.</summary>
    private static int[] EagerGreedy(ModelVersion model, double q, int length)
    {
        var learner = model.Prior.ToArray();
        var shown = new bool[model.TeachCount];
        var scratch = new float[MistakeKernel.PaddedLength(model.HypothesisCount)];
        var sequence = new List<int>();
        for (var step = 0; step < length; step++)
        {
            var item = TeachingOrders.NextGreedy(model, learner, shown, scratch, out var gain);
            if (item < 0 || gain <= 0)
            {
                break;
            }

            sequence.Add(item);
            shown[item] = true;
            TeachingOrders.ApplyShown(model, learner, item, q);
        }

        return [.. sequence];
    }

    [Theory]
    [InlineData(71, 2, 0.8)]
    [InlineData(72, 2, 2.0)]
    [InlineData(73, 3, 1.2)]
    [InlineData(74, 4, 0.3)]
    public void Lazy_greedy_matches_the_full_scan(int seed, int labels, double alpha)
    {
        var model = TinyModels.Random(seed, m: 3_000, teach: 150, test: 20, labels, alpha, lapse: 0.05);
        var q = model.Q;
        Assert.Equal(EagerGreedy(model, q, 120), TeachingOrders.StochasticGreedy(model, q, 120));
    }

    /// <summary>The cover order by full scans: each step the item eliminating the most consistent prior mass.</summary>
    private static int[] EagerCover(ModelVersion model)
    {
        var consistent = new float[MistakeKernel.PaddedLength(model.HypothesisCount)];
        for (var h = 0; h < model.HypothesisCount; h++)
        {
            consistent[h] = (float)model.Prior[h];
        }

        var shown = new bool[model.TeachCount];
        var sequence = new List<int>();
        while (true)
        {
            var best = TeachingOrders.ArgMaxRowSum(model, consistent, shown, out var gain);
            if (best < 0 || !(gain > 0))
            {
                return [.. sequence];
            }

            sequence.Add(best);
            shown[best] = true;
            for (var h = 0; h < model.HypothesisCount; h++)
            {
                if (model.Mistake(h, best))
                {
                    consistent[h] = 0;
                }
            }
        }
    }

    [Theory]
    [InlineData(81, 2)]
    [InlineData(82, 3)]
    [InlineData(83, 2)]
    public void Lazy_cover_matches_the_full_scan(int seed, int labels)
    {
        var model = TinyModels.Random(seed, m: 4_000, teach: 200, test: 10, labels, alpha: 1, lapse: 0);
        Assert.Equal(EagerCover(model), TeachingOrders.Cover(model, out _));
    }
}
