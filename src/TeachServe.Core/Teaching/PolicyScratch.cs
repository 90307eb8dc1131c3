using TeachServe.Core.Model;

namespace TeachServe.Core.Teaching;

/// <summary>
/// Float vectors a teaching step fills from the belief and reads back within the same call, one set per thread:
/// a server holding thousands of sessions keeps none of them per session. A step runs synchronously on one
/// thread, so two steps never share a set.
/// </summary>
internal static class PolicyScratch
{
    [ThreadStatic]
    private static float[]? _buffer;

    /// <summary>
    /// <paramref name="vectors"/> vectors of <see cref="MistakeKernel.PaddedLength"/> floats each, back to back; the
    /// padding after the last hypothesis of each is zero (the kernels read whole words).
    /// </summary>
    public static Span<float> Rent(int vectors, int hypotheses)
    {
        var padded = MistakeKernel.PaddedLength(hypotheses);
        var length = vectors * padded;
        var buffer = _buffer;
        if (buffer is null || buffer.Length < length)
        {
            _buffer = buffer = new float[length];
        }

        var span = buffer.AsSpan(0, length);
        for (var v = 0; v < vectors; v++)
        {
            span.Slice((v * padded) + hypotheses, padded - hypotheses).Clear();
        }

        return span;
    }
}
