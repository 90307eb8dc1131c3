using Microsoft.AspNetCore.OpenApi;
using Microsoft.OpenApi;
using TeachServe.Core.Projects;

namespace TeachServe.Server.Items;

/// <summary>
/// The upload's request body in the OpenAPI document: one body, three media types, each with its own shape. The
/// framework gives all three the one body type it knows (the JSON array); JSON Lines and CSV are text.
/// </summary>
public static class ItemUploadBodies
{
    public static Task DescribeAsync(OpenApiOperation operation, OpenApiOperationTransformerContext context, CancellationToken ct)
    {
        if (operation.RequestBody is not OpenApiRequestBody body || body.Content is null) return Task.CompletedTask;
        body.Required = true;
        body.Description = "The items, all or nothing: a JSON array of items, the same items one per line (JSON Lines), or CSV.";
        body.Content[ItemUploadFormats.JsonLinesMediaType] = new OpenApiMediaType
        {
            Schema = new OpenApiSchema
            {
                Type = JsonSchemaType.String,
                Description = "One item object per line, each shaped like the items of the application/json array.",
            },
        };
        body.Content[ItemUploadFormats.CsvMediaType] = new OpenApiMediaType
        {
            Schema = new OpenApiSchema
            {
                Type = JsonSchemaType.String,
                Description = "A header row, then one item per row. Columns: " + string.Join(", ", ItemReader.CsvColumns) +
                    $" (id, pool and label required); {ItemReader.CsvFeaturePrefix}<name> for a numeric feature, " +
                    $"{ItemReader.CsvAttributePrefix}<name> for a 0/1 attribute.",
            },
        };
        return Task.CompletedTask;
    }
}
