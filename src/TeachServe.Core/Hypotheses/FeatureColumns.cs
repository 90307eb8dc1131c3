using System.Numerics;

namespace TeachServe.Core.Hypotheses;

/// <summary>
/// Standardised features stored one column per feature, for predicting the class of every item under many weight
/// sets: the scores of a block of items are built feature by feature with SIMD across items.
/// </summary>
public sealed class FeatureColumns
{
    /// <summary>Items scored together: the block's K score vectors stay in L1.</summary>
    private const int Block = 256;

    private readonly double[][] _columns;

    public FeatureColumns(double[][] rows)
    {
        Count = rows.Length;
        Width = rows.Length == 0 ? 0 : rows[0].Length;
        var padded = (Count + Vector<double>.Count - 1) / Vector<double>.Count * Vector<double>.Count;
        _columns = new double[Width][];
        for (var j = 0; j < Width; j++)
        {
            var column = new double[padded];
            for (var i = 0; i < Count; i++)
            {
                column[i] = rows[i][j];
            }

            _columns[j] = column;
        }
    }

    public int Count { get; }
    public int Width { get; }

    public ReadOnlySpan<double> Column(int feature) => _columns[feature].AsSpan(0, Count);

    /// <summary>Fills <paramref name="scores"/> with w_intercept + Σ_j w_j·x_j of every item (SIMD across items).</summary>
    public void Score(double[] w, Span<double> scores)
    {
        scores[..Count].Fill(w[^1]);
        var lanes = Vector<double>.Count;
        for (var j = 0; j < Width; j++)
        {
            if (w[j] == 0.0)
            {
                continue;
            }

            var factor = new Vector<double>(w[j]);
            var column = _columns[j];
            var i = 0;
            for (; i + lanes <= Count; i += lanes)
            {
                (new Vector<double>(scores[i..]) + (factor * new Vector<double>(column, i))).CopyTo(scores[i..]);
            }

            for (; i < Count; i++)
            {
                scores[i] += w[j] * column[i];
            }
        }
    }

    /// <summary>Σ_i x_ia·x_ib over the items, for a covariance matrix.</summary>
    public double Dot(int a, int b)
    {
        var lanes = Vector<double>.Count;
        var sum = Vector<double>.Zero;
        var x = _columns[a];
        var y = _columns[b];
        // Padding past Count is zero, so whole vectors can run to the padded end.
        for (var i = 0; i < x.Length; i += lanes)
        {
            sum += new Vector<double>(x, i) * new Vector<double>(y, i);
        }

        return Vector.Sum(sum);
    }

    /// <summary>
    /// The predicted class (argmax score, the first of equal scores) of every item under weights
    /// [class][feature + intercept]. Each item's score is w_intercept + Σ_j w_j·x_j added in feature order, as
    /// <see cref="LogisticFit.Predict(double[][], double[][])"/> adds it, so the predictions are the same bit for bit:
    /// SIMD lanes round each item's multiply and add separately (no fused multiply-add), and features with weight
    /// exactly zero are skipped because adding ±0 to a finite score leaves it equal.
    /// </summary>
    public byte[] Predict(double[][] weights)
    {
        var predictions = new byte[Count];
        Predict(weights, predictions);
        return predictions;
    }

    public void Predict(double[][] weights, Span<byte> predictions)
    {
        var k = weights.Length;
        var used = new int[k][];
        for (var c = 0; c < k; c++)
        {
            var list = new List<int>(Width);
            for (var j = 0; j < Width; j++)
            {
                if (weights[c][j] != 0.0)
                {
                    list.Add(j);
                }
            }

            used[c] = [.. list];
        }

        var lanes = Vector<double>.Count;
        Span<double> best = stackalloc double[Block];
        Span<double> bestClass = stackalloc double[Block];
        Span<double> score = stackalloc double[Block];
        for (var start = 0; start < Count; start += Block)
        {
            var length = Math.Min(Block, Count - start);
            var vectorLength = (length + lanes - 1) / lanes * lanes;
            best[..vectorLength].Fill(double.NegativeInfinity);
            bestClass[..vectorLength].Clear();
            for (var c = 0; c < k; c++)
            {
                var w = weights[c];
                score[..vectorLength].Fill(w[^1]);
                foreach (var j in used[c])
                {
                    var factor = new Vector<double>(w[j]);
                    var column = _columns[j].AsSpan(start, vectorLength);
                    for (var i = 0; i < vectorLength; i += lanes)
                    {
                        var s = new Vector<double>(score[i..]);
                        (s + (factor * new Vector<double>(column[i..]))).CopyTo(score[i..]);
                    }
                }

                var label = new Vector<double>(c);
                for (var i = 0; i < vectorLength; i += lanes)
                {
                    var s = new Vector<double>(score[i..]);
                    var b = new Vector<double>(best[i..]);
                    var better = Vector.GreaterThan(s, b);
                    Vector.ConditionalSelect(better, s, b).CopyTo(best[i..]);
                    Vector.ConditionalSelect(better, label, new Vector<double>(bestClass[i..])).CopyTo(bestClass[i..]);
                }
            }

            for (var i = 0; i < length; i++)
            {
                predictions[start + i] = (byte)bestClass[i];
            }
        }
    }
}
