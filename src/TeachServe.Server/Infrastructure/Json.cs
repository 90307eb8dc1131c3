using System.Text.Encodings.Web;
using System.Text.Json;
using System.Text.Json.Serialization;

namespace TeachServe.Server.Infrastructure;

/// <summary>
/// One JSON dialect for requests, responses and stored documents: camelCase, strict numbers, unknown
/// members rejected (a typo in a setting should fail loudly, not be ignored), nullability respected.
/// </summary>
public static class Json
{
    public static readonly JsonSerializerOptions Options = Configure(new JsonSerializerOptions(JsonSerializerDefaults.Web));

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
        return o;
    }

    public static string Serialize<T>(T value) => JsonSerializer.Serialize(value, Options);

    public static T Deserialize<T>(string json) => JsonSerializer.Deserialize<T>(json, Options)
        ?? throw new JsonException($"Expected a {typeof(T).Name}, found null.");
}
