using System.Text.Json;
using System.Text.Json.Serialization;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Experiments;

/// <summary>
/// The JSON dialect of research results: the server's, with undefined numbers (NaN, ±∞) written as null,
/// since reports carry NaN for "not enough data" and JSON has no such number.
/// </summary>
public static class ReportJson
{
    public static readonly JsonSerializerOptions Options = Create();

    private static JsonSerializerOptions Create()
    {
        var o = new JsonSerializerOptions(Json.Options);
        o.Converters.Add(new UndefinedAsNull());
        o.Converters.Add(new JsonStringEnumConverter(JsonNamingPolicy.KebabCaseLower));
        return o;
    }

    private sealed class UndefinedAsNull : JsonConverter<double>
    {
        public override bool HandleNull => true;

        public override double Read(ref Utf8JsonReader reader, Type typeToConvert, JsonSerializerOptions options) =>
            reader.TokenType == JsonTokenType.Null ? double.NaN : reader.GetDouble();

        public override void Write(Utf8JsonWriter writer, double value, JsonSerializerOptions options)
        {
            if (double.IsFinite(value)) writer.WriteNumberValue(value);
            else writer.WriteNullValue();
        }
    }
}
