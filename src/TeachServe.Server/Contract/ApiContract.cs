using Microsoft.AspNetCore.OpenApi;

namespace TeachServe.Server.Contract;

/// <summary>
/// The served OpenAPI document as a contract: the framework describes each endpoint from its signature and its
/// <c>Produces</c> and <see cref="ProblemMetadata.Problem{TBuilder}"/> metadata; these transformers add what the signatures cannot say (the key
/// scheme, the answers every keyed or rate-limited request can get, the problem details shape, the closed sets of
/// string values). docs/api.md lists what the document promises; ./test.sh lints it.
/// </summary>
public static class ApiContract
{
    /// <summary>The security scheme of all four kinds of key (<c>Authorization: Bearer &lt;key&gt;</c>).</summary>
    public const string BearerScheme = "bearer";

    /// <summary>The component every error response refers to (RFC 9457 problem details).</summary>
    public const string ProblemSchema = "ProblemDetails";

    public const string ProblemMediaType = "application/problem+json";

    public static IServiceCollection AddApiContract(this IServiceCollection services) =>
        services.AddOpenApi(o =>
        {
            o.AddDocumentTransformer<ContractDocument>();
            o.AddOperationTransformer<CommonResponses>();
            o.AddSchemaTransformer<WireValues>();
        });
}
