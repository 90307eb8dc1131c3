using System.Runtime.InteropServices;
using TeachServe.Embedding;

namespace TeachServe.Server.Items;

/// <summary>
/// The server's one sentence embedder (family <c>text</c>), loaded on first use so that servers without text projects
/// never load the model, and the float32 byte form item rows and version snapshots store vectors in.
/// </summary>
public sealed class TextEmbeddings : IDisposable
{
    private readonly Lazy<SentenceEmbedder> _embedder = new(() => new SentenceEmbedder(), LazyThreadSafetyMode.ExecutionAndPublication);

    public string ModelName => SentenceEmbedder.ModelName;

    /// <summary>Embeds on a pool thread: the work is CPU-bound and takes seconds for thousands of texts.</summary>
    public Task<float[][]> EmbedAsync(IReadOnlyList<string> texts, CancellationToken ct) =>
        texts.Count == 0 ? Task.FromResult(Array.Empty<float[]>()) : Task.Run(() => _embedder.Value.Embed(texts, ct), ct);

    public static byte[] ToBytes(float[] vector) => MemoryMarshal.AsBytes(vector.AsSpan()).ToArray();

    public static float[] FromBytes(ReadOnlySpan<byte> bytes) => MemoryMarshal.Cast<byte, float>(bytes).ToArray();

    public void Dispose()
    {
        if (_embedder.IsValueCreated) _embedder.Value.Dispose();
    }
}
