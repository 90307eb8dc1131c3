using System.Text;
using System.Text.Json;
using TeachServe.Core.Projects;

namespace TeachServe.Core.Model;

/// <summary>
/// Binary form of a compiled <see cref="ModelVersion"/>, so a server stores a version once and every node
/// loads exactly the same snapshot. Little-endian; a format number leads so old blobs are recognised.
/// </summary>
public static class ModelVersionSerializer
{
    private const int Magic = 0x54534D56; // "TSMV"
    private const int Format = 1;

    public static void Write(ModelVersion model, Stream stream)
    {
        using var w = new BinaryWriter(stream, Encoding.UTF8, leaveOpen: true);
        w.Write(Magic);
        w.Write(Format);
        WriteStrings(w, model.Labels);
        WriteStrings(w, model.ItemIds);
        w.Write(model.TeachCount);
        WriteInts(w, model.TrueLabelArray);
        w.Write(model.HypothesisCount);
        WriteDoubles(w, model.Prior);
        w.Write(model.TargetIndex);
        w.Write(model.Learner.Alpha);
        w.Write(model.Learner.Lapse);
        var mistakes = model.MistakeBits;
        w.Write(mistakes.Length);
        foreach (var word in mistakes)
        {
            w.Write(word);
        }

        var predictions = model.PredictionBytes;
        w.Write(predictions.Length);
        w.Write(predictions);
        WriteInts(w, model.GreedySequence.ToArray());
        WriteInts(w, model.EasyFirstOrder.ToArray());
        WriteInts(w, model.CoverSequence.ToArray());
        w.Write(JsonSerializer.Serialize(model.Summary));
    }

    public static ModelVersion Read(Stream stream)
    {
        using var r = new BinaryReader(stream, Encoding.UTF8, leaveOpen: true);
        if (r.ReadInt32() != Magic)
        {
            throw new InvalidDataException("Not a TeachServe model version.");
        }

        var format = r.ReadInt32();
        if (format != Format)
        {
            throw new InvalidDataException($"Model version format {format} is not supported (expected {Format}).");
        }

        var labels = ReadStrings(r);
        var itemIds = ReadStrings(r);
        var teachCount = r.ReadInt32();
        var truth = ReadInts(r);
        var hypotheses = r.ReadInt32();
        var prior = ReadDoubles(r);
        var target = r.ReadInt32();
        var learner = new LearnerSettings { Alpha = r.ReadDouble(), Lapse = r.ReadDouble() };
        var mistakes = new ulong[r.ReadInt32()];
        for (var i = 0; i < mistakes.Length; i++)
        {
            mistakes[i] = r.ReadUInt64();
        }

        var predictionLength = r.ReadInt32();
        var predictions = predictionLength == 0 ? null : r.ReadBytes(predictionLength);
        var greedy = ReadInts(r);
        var easy = ReadInts(r);
        var cover = ReadInts(r);
        var summary = JsonSerializer.Deserialize<ModelSummary>(r.ReadString()) ?? throw new InvalidDataException("Missing summary.");
        if (prior.Length != hypotheses || truth.Length != itemIds.Length || mistakes.Length != itemIds.Length * MistakeKernel.WordsPerRow(hypotheses))
        {
            throw new InvalidDataException("Model version blob is inconsistent.");
        }

        return new ModelVersion(labels, itemIds, teachCount, truth, mistakes, predictions, prior, target, learner, greedy, easy, cover, summary);
    }

    public static byte[] ToBytes(ModelVersion model)
    {
        using var buffer = new MemoryStream();
        Write(model, buffer);
        return buffer.ToArray();
    }

    public static ModelVersion FromBytes(byte[] bytes)
    {
        using var buffer = new MemoryStream(bytes, writable: false);
        return Read(buffer);
    }

    private static void WriteStrings(BinaryWriter w, IReadOnlyList<string> values)
    {
        w.Write(values.Count);
        foreach (var v in values)
        {
            w.Write(v);
        }
    }

    private static string[] ReadStrings(BinaryReader r)
    {
        var values = new string[r.ReadInt32()];
        for (var i = 0; i < values.Length; i++)
        {
            values[i] = r.ReadString();
        }

        return values;
    }

    private static void WriteInts(BinaryWriter w, ReadOnlySpan<int> values)
    {
        w.Write(values.Length);
        foreach (var v in values)
        {
            w.Write(v);
        }
    }

    private static int[] ReadInts(BinaryReader r)
    {
        var values = new int[r.ReadInt32()];
        for (var i = 0; i < values.Length; i++)
        {
            values[i] = r.ReadInt32();
        }

        return values;
    }

    private static void WriteDoubles(BinaryWriter w, ReadOnlySpan<double> values)
    {
        w.Write(values.Length);
        foreach (var v in values)
        {
            w.Write(v);
        }
    }

    private static double[] ReadDoubles(BinaryReader r)
    {
        var values = new double[r.ReadInt32()];
        for (var i = 0; i < values.Length; i++)
        {
            values[i] = r.ReadDouble();
        }

        return values;
    }
}
