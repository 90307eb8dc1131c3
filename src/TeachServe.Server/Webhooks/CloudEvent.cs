using System.Text.Json.Serialization;

namespace TeachServe.Server.Webhooks;

/// <summary>
/// One event in the CloudEvents 1.0 JSON format, sent in structured content mode: the attributes and the data in one
/// JSON body of type <see cref="WebhookEvents.MediaType"/> (cloudevents/spec v1.0.2: cloudevents/spec.md, "Context
/// Attributes"; cloudevents/formats/json-format.md, §3 "Envelope"; cloudevents/bindings/http-protocol-binding.md,
/// §3.2 "Structured Content Mode").
/// </summary>
/// <param name="Id">The message id, also sent as <c>webhook-id</c>: random per event, the same on every retry.</param>
/// <param name="Source">Where the event happened: <c>/projects/{projectId}</c> (a URI reference; spec.md, "source").</param>
/// <param name="Type">Our event name under a reverse-DNS prefix, as spec.md "type" recommends (<see cref="WebhookEvents"/>).</param>
/// <param name="Subject">What the event is about within the source: the session id (for a live status, the session whose release the monitor continues).</param>
/// <param name="Time">When the event happened (RFC 3339): the session's end, or the storing of the outcome that changed a live status; not when it was delivered.</param>
public sealed record CloudEvent<TData>(
    string Id, string Source, string Type, string Subject, DateTimeOffset Time,
    [property: JsonPropertyOrder(1)] TData Data)
{
    [JsonPropertyName("specversion"), JsonPropertyOrder(-1)]
    public string SpecVersion => "1.0";

    /// <summary><c>data</c> is a JSON value (json-format.md §3.1).</summary>
    [JsonPropertyName("datacontenttype")]
    public string DataContentType => "application/json";
}
