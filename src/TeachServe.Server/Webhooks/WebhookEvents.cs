namespace TeachServe.Server.Webhooks;

/// <summary>
/// The names receivers see. Types are our session event names under the reverse-DNS prefix <c>org.teachserve.</c>
/// (CloudEvents spec.md, "type": SHOULD be prefixed with a reverse-DNS name), full-stop delimited as Standard
/// Webhooks recommends for event types ("Event types").
/// </summary>
public static class WebhookEvents
{
    public const string TypePrefix = "org.teachserve.";

    /// <summary>The body's media type: one CloudEvent in the JSON format (json-format.md §3).</summary>
    public const string MediaType = "application/cloudevents+json";

    /// <summary>The CloudEvents <c>type</c> of a session event type such as <c>session.released</c>.</summary>
    public static string TypeOf(string eventType) => TypePrefix + eventType;

    /// <summary>The CloudEvents <c>source</c> of a project's events.</summary>
    public static string SourceOf(string projectId) => $"/projects/{projectId}";
}
