using System.Text.Encodings.Web;
using System.Text.Json;
using System.Text.Json.Serialization;

namespace TeachServe.Server.Infrastructure;

/// <summary>
/// The one JSON dialect of the server, for requests and responses (the HTTP pipeline is configured with
/// <see cref="Configure"/>, and the OpenAPI document is generated from that configuration), stored documents, webhook
/// payloads and exports: camelCase, strict numbers, unknown members rejected (a typo in a setting should fail loudly, not
/// be ignored), nullability respected, enum members as kebab-case strings.
/// </summary>
public static class Json
{
    public static readonly JsonSerializerOptions Options = Configure(new JsonSerializerOptions(JsonSerializerDefaults.Web));

    /// <summary>
    /// The dialect for research results (experiment reports, fits, simulations), which say "not enough data" with NaN:
    /// undefined numbers (NaN, ±∞) are written as null and read back as NaN. Everything else as <see cref="Options"/>. Kept
    /// apart because the OpenAPI generator cannot see through a number converter (it would drop every number's type), and
    /// because elsewhere a null number is the client's mistake.
    /// </summary>
    public static readonly JsonSerializerOptions Results = new(Options) { Converters = { new UndefinedAsNull() } };

    /// <summary>For reading stored research results back: <see cref="Results"/>, skipping members an older or newer server wrote.</summary>
    public static readonly JsonSerializerOptions StoredResults = new(Results) { UnmappedMemberHandling = JsonUnmappedMemberHandling.Skip };

    public static JsonSerializerOptions Configure(JsonSerializerOptions o)
    {
        o.PropertyNamingPolicy = JsonNamingPolicy.CamelCase;
        o.NumberHandling = JsonNumberHandling.Strict;
        o.UnmappedMemberHandling = JsonUnmappedMemberHandling.Disallow;
        o.RespectNullableAnnotations = true;
        o.RespectRequiredConstructorParameters = true;
        o.AllowTrailingCommas = false;
        o.ReadCommentHandling = JsonCommentHandling.Disallow;
        o.MaxDepth = 32;
        o.DefaultIgnoreCondition = JsonIgnoreCondition.WhenWritingNull;
        o.Encoder = JavaScriptEncoder.UnsafeRelaxedJsonEscaping;
        o.Converters.Add(new JsonStringEnumConverter(JsonNamingPolicy.KebabCaseLower));
        return o;
    }

    public static string Serialize<T>(T value) => JsonSerializer.Serialize(value, Options);

    public static T Deserialize<T>(string json) => JsonSerializer.Deserialize<T>(json, Options)
        ?? throw new JsonException($"Expected a {typeof(T).Name}, found null.");

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
