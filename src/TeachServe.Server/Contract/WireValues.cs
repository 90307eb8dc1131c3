using System.Text.Json.Nodes;
using Microsoft.AspNetCore.OpenApi;
using Microsoft.OpenApi;
using TeachServe.Core.Simulation;
using TeachServe.Server.Annotate;
using TeachServe.Server.Experiments;
using TeachServe.Server.Health;
using TeachServe.Server.Projects;
using TeachServe.Server.Sessions;
using TeachServe.Server.Simulations;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Contract;

/// <summary>
/// Phases and statuses travel as plain strings (the wire format predates this document and tests pin it), but each
/// is one of a closed set: this schema transformer writes that set as a string enum on every property and query
/// parameter that carries one, so that clients can generate exhaustive types.
/// </summary>
public sealed class WireValues : IOpenApiSchemaTransformer
{
    /// <summary>(declaring type, JSON property name) → the values it can take.</summary>
    public static readonly IReadOnlyDictionary<(Type Type, string Property), IReadOnlyList<string>> Properties =
        new Dictionary<(Type, string), IReadOnlyList<string>>
        {
            [(typeof(SessionStarted), "phase")] = Phases.All,
            [(typeof(NextItem), "phase")] = Phases.All,
            [(typeof(AnswerResult), "phase")] = Phases.All,
            [(typeof(SessionView), "phase")] = Phases.All,
            [(typeof(EvidenceView), "phase")] = Phases.All,
            [(typeof(AnnotatorPageState), "phase")] = Phases.All,
            [(typeof(EndView), "phase")] = [Phases.Released, Phases.Failed],
            [(typeof(VersionView), "status")] = VersionStatuses.All,
            [(typeof(ExperimentView), "status")] = ExperimentStatuses.All,
            [(typeof(SimulationView), "status")] = SimulationStatuses.All,
            [(typeof(HealthStatus), "status")] = HealthApi.Statuses,
            [(typeof(LiveQuality.LiveAnnotatorView), "status")] = LiveQuality.LiveStatusNames.All,
            [(typeof(LiveQuality.LiveAnnotatorStatus), "status")] = LiveQuality.LiveStatusNames.All,
            [(typeof(LiveQuality.LiveAnnotatorView), "countView")] =
                [LiveQuality.LiveViewReadings.Above, LiveQuality.LiveViewReadings.Within, LiveQuality.LiveViewReadings.Undecided],
            [(typeof(Core.Projects.ItemDefinition), "pool")] = [Core.Projects.Pools.Teach, Core.Projects.Pools.Test, Core.Projects.Pools.Live],
            [(typeof(StartSessionRequest), "purpose")] = SessionPurposes.All,
            [(typeof(SessionView), "purpose")] = SessionPurposes.All,
            [(typeof(AnnotatorPageState), "purpose")] = SessionPurposes.All,
        };

    /// <summary>
    /// The types research results are made of. <see cref="Infrastructure.Json"/> writes their undefined numbers (NaN, ±∞: "not
    /// enough data") as null, so their numbers are documented as nullable.
    /// </summary>
    public static readonly IReadOnlySet<Type> ReportTypes =
        Reachable([typeof(Core.Experiments.ExperimentReportResult), typeof(SimulationResult), typeof(Core.Fitting.FitResult), typeof(Core.Fitting.CalibrationReport)]);

    /// <summary>
    /// Query or route parameter name → values (the session list's phase filter, the kind of project key, the live-quality
    /// list's status filter).
    /// </summary>
    public static readonly IReadOnlyDictionary<string, IReadOnlyList<string>> Parameters =
        new Dictionary<string, IReadOnlyList<string>>
        {
            ["phase"] = Phases.All, ["kind"] = ProjectKeysApi.Kinds, ["status"] = LiveQuality.LiveStatusNames.All,
        };

    public Task TransformAsync(OpenApiSchema schema, OpenApiSchemaTransformerContext context, CancellationToken cancellationToken)
    {
        // .NET enums are written as kebab-case strings (Infrastructure.Json); the framework lists their names but leaves
        // the schema without a type.
        if (context.JsonTypeInfo.Type.IsEnum && schema.Enum is { Count: > 0 } && schema.Type is null)
            schema.Type = JsonSchemaType.String;

        IReadOnlyList<string>? values = null;
        if (context.JsonPropertyInfo is { } property)
            values = Properties.GetValueOrDefault((property.DeclaringType, property.Name));
        else if (context.ParameterDescription is { } parameter)
            values = Parameters.GetValueOrDefault(parameter.Name);
        if (values is not null && schema.Type is { } type && type.HasFlag(JsonSchemaType.String))
            schema.Enum = values.Select(v => (JsonNode)JsonValue.Create(v)).ToList();

        if (context.JsonPropertyInfo is { } number && ReportTypes.Contains(number.DeclaringType)
            && (Nullable.GetUnderlyingType(number.PropertyType) ?? number.PropertyType) == typeof(double))
            schema.Type = (schema.Type ?? JsonSchemaType.Number) | JsonSchemaType.Null;
        return Task.CompletedTask;
    }

    /// <summary>The given types and every TeachServe type their public properties hold, through lists and nullables.</summary>
    private static HashSet<Type> Reachable(IEnumerable<Type> roots)
    {
        var found = new HashSet<Type>();
        var pending = new Stack<Type>(roots);
        while (pending.TryPop(out var type))
        {
            if (!found.Add(type)) continue;
            foreach (var property in type.GetProperties(System.Reflection.BindingFlags.Public | System.Reflection.BindingFlags.Instance))
            {
                var held = Nullable.GetUnderlyingType(property.PropertyType) ?? property.PropertyType;
                if (held.IsArray) held = held.GetElementType()!;
                else if (held.IsGenericType && held != typeof(string)) held = held.GetGenericArguments()[^1];
                if (held.Namespace?.StartsWith("TeachServe.", StringComparison.Ordinal) == true && !held.IsEnum) pending.Push(held);
            }
        }
        return found;
    }
}
