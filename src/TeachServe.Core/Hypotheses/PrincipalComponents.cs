using MathNet.Numerics.LinearAlgebra;
using MathNet.Numerics.LinearAlgebra.Factorization;

namespace TeachServe.Core.Hypotheses;

/// <summary>
/// Principal components of item vectors (rows), for reducing embeddings to the few dimensions the linear family
/// works in. Up to <see cref="ExactLimit"/> columns the covariance matrix is eigen-decomposed exactly; longer vectors
/// use randomized subspace iteration (Halko, Martinsson &amp; Tropp, "Finding structure with randomness", SIAM Review
/// 53(2), 2011, Algorithm 4.4) with a seeded Gaussian start, which costs O(n·d·k) instead of O(n·d²) + O(d³).
/// Signs are fixed (the largest loading of each component is positive), so a projection is reproducible.
/// </summary>
public static class PrincipalComponents
{
    /// <summary>Vector lengths up to this are decomposed exactly.</summary>
    public const int ExactLimit = 512;

    /// <summary>Extra directions kept while iterating (Halko et al.'s oversampling p).</summary>
    private const int Oversampling = 10;

    /// <summary>Power iterations: enough for the slowly decaying spectra of sentence embeddings (Halko et al. §4.5).</summary>
    private const int PowerIterations = 4;

    /// <summary>Scores of every row on the first <paramref name="components"/> principal components, and the share of variance they keep.</summary>
    public static (double[][] Scores, double ExplainedVariance) Project(IReadOnlyList<float[]> rows, int components, ulong seed)
    {
        ArgumentNullException.ThrowIfNull(rows);
        if (rows.Count == 0) return ([], double.NaN);
        var n = rows.Count;
        var d = rows[0].Length;
        var x = Centered(rows, d);
        var k = Math.Max(1, Math.Min(components, Math.Min(d, n)));
        var basis = d <= ExactLimit ? ExactBasis(x, k) : RandomizedBasis(x, k, seed);
        FixSigns(basis);
        var scores = x * basis;
        var total = x.FrobeniusNorm();
        var kept = scores.FrobeniusNorm();
        var result = new double[n][];
        for (var i = 0; i < n; i++) result[i] = scores.Row(i).ToArray();
        return (result, total > 0 ? kept * kept / (total * total) : 0.0);
    }

    private static Matrix<double> Centered(IReadOnlyList<float[]> rows, int d)
    {
        var n = rows.Count;
        var x = Matrix<double>.Build.Dense(n, d);
        var mean = new double[d];
        foreach (var row in rows)
        {
            if (row.Length != d) throw new ArgumentException("Every vector must have the same length.", nameof(rows));
            for (var j = 0; j < d; j++) mean[j] += row[j];
        }
        for (var j = 0; j < d; j++) mean[j] /= n;
        for (var i = 0; i < n; i++)
        {
            var row = rows[i];
            for (var j = 0; j < d; j++) x[i, j] = row[j] - mean[j];
        }
        return x;
    }

    /// <summary>Top eigenvectors of XᵀX (d × d), columns ordered by eigenvalue, largest first.</summary>
    internal static Matrix<double> ExactBasis(Matrix<double> x, int k)
    {
        var evd = x.TransposeThisAndMultiply(x).Evd(Symmetricity.Symmetric);
        return TopColumns(evd.EigenVectors, evd.EigenValues.Select(v => v.Real).ToArray(), k);
    }

    /// <summary>Halko et al. 2011, Algorithm 4.4, then the right singular vectors of B = QᵀX from the small l × l matrix BBᵀ.</summary>
    internal static Matrix<double> RandomizedBasis(Matrix<double> x, int k, ulong seed)
    {
        var d = x.ColumnCount;
        var l = Math.Min(d, Math.Min(x.RowCount, k + Oversampling));
        var random = new SeededRandom(seed);
        var omega = Matrix<double>.Build.Dense(d, l, (_, _) => random.NextGaussian());
        var q = (x * omega).QR(QRMethod.Thin).Q;
        for (var i = 0; i < PowerIterations; i++)
        {
            var z = x.TransposeThisAndMultiply(q).QR(QRMethod.Thin).Q;
            q = (x * z).QR(QRMethod.Thin).Q;
        }
        var b = q.TransposeThisAndMultiply(x); // l × d
        var evd = (b * b.Transpose()).Evd(Symmetricity.Symmetric);
        var values = evd.EigenValues.Select(v => v.Real).ToArray();
        var u = TopColumns(evd.EigenVectors, values, k);
        var top = values.Order().Reverse().Take(k).ToArray();
        var v = b.TransposeThisAndMultiply(u); // d × k, column j = Bᵀu_j = σ_j v_j
        for (var j = 0; j < k; j++)
        {
            var sigma = Math.Sqrt(Math.Max(top[j], 0));
            v.SetColumn(j, sigma > 0 ? v.Column(j) / sigma : v.Column(j));
        }
        return v;
    }

    private static Matrix<double> TopColumns(Matrix<double> vectors, double[] values, int k)
    {
        var order = Enumerable.Range(0, values.Length).OrderByDescending(i => values[i]).ThenBy(i => i).Take(k).ToArray();
        var basis = Matrix<double>.Build.Dense(vectors.RowCount, order.Length);
        for (var j = 0; j < order.Length; j++) basis.SetColumn(j, vectors.Column(order[j]));
        return basis;
    }

    private static void FixSigns(Matrix<double> basis)
    {
        for (var j = 0; j < basis.ColumnCount; j++)
        {
            var column = basis.Column(j);
            if (column[column.AbsoluteMaximumIndex()] < 0) basis.SetColumn(j, -column);
        }
    }
}
