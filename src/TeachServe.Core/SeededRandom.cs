namespace TeachServe.Core;

/// <summary>
/// xoshiro256** seeded through SplitMix64 (Blackman &amp; Vigna, "Scrambled linear pseudorandom number generators",
/// 2021). Our own generator rather than System.Random so that a seed gives the same sequence on every runtime:
/// sessions and simulations must replay exactly.
/// </summary>
public sealed class SeededRandom
{
    private ulong _s0, _s1, _s2, _s3;

    public SeededRandom(ulong seed)
    {
        var x = seed;
        _s0 = SplitMix(ref x);
        _s1 = SplitMix(ref x);
        _s2 = SplitMix(ref x);
        _s3 = SplitMix(ref x);
    }

    /// <summary>Derives an independent stream seed from a parent seed and a stream number.</summary>
    public static ulong Derive(ulong seed, ulong stream)
    {
        var x = seed ^ (stream * 0x9E3779B97F4A7C15UL);
        SplitMix(ref x);
        return SplitMix(ref x);
    }

    private static ulong SplitMix(ref ulong x)
    {
        x += 0x9E3779B97F4A7C15UL;
        var z = x;
        z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9UL;
        z = (z ^ (z >> 27)) * 0x94D049BB133111EBUL;
        return z ^ (z >> 31);
    }

    public ulong NextUInt64()
    {
        var result = ulong.RotateLeft(_s1 * 5, 7) * 9;
        var t = _s1 << 17;
        _s2 ^= _s0;
        _s3 ^= _s1;
        _s1 ^= _s2;
        _s0 ^= _s3;
        _s2 ^= t;
        _s3 = ulong.RotateLeft(_s3, 45);
        return result;
    }

    /// <summary>Uniform in [0, 1) with 53 random bits.</summary>
    public double NextDouble() => (NextUInt64() >> 11) * (1.0 / (1UL << 53));

    /// <summary>Uniform integer in [0, n), without modulo bias (Lemire's method).</summary>
    public int NextInt(int n)
    {
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(n);
        var bound = (ulong)n;
        var threshold = (0UL - bound) % bound;
        while (true)
        {
            var r = NextUInt64();
            var product = Math.BigMul(r, bound, out var low);
            if (low >= threshold)
            {
                return (int)product;
            }
        }
    }

    /// <summary>Standard normal by Box–Muller.</summary>
    public double NextGaussian()
    {
        var u1 = 1.0 - NextDouble();
        var u2 = NextDouble();
        return Math.Sqrt(-2.0 * Math.Log(u1)) * Math.Cos(2.0 * Math.PI * u2);
    }

    public void Shuffle<T>(Span<T> values)
    {
        for (var i = values.Length - 1; i > 0; i--)
        {
            var j = NextInt(i + 1);
            (values[i], values[j]) = (values[j], values[i]);
        }
    }

    /// <summary>Draws an index with probability proportional to <paramref name="weights"/> (all ≥ 0, sum &gt; 0).</summary>
    public int Choose(ReadOnlySpan<double> weights, double total)
    {
        var u = NextDouble() * total;
        var acc = 0.0;
        var last = -1;
        for (var i = 0; i < weights.Length; i++)
        {
            if (weights[i] <= 0)
            {
                continue;
            }

            acc += weights[i];
            last = i;
            if (u < acc)
            {
                return i;
            }
        }

        return last;
    }
}
