using Microsoft.Net.Http.Headers;

namespace TeachServe.Server.Items;

public enum ItemUploadFormat
{
    JsonLines,
    JsonArray,
    Csv,
}

public static class ItemUploadFormats
{
    public const string JsonLinesMediaType = "application/x-ndjson";
    public const string CsvMediaType = "text/csv";

    public static ItemUploadFormat? FromContentType(string? contentType)
    {
        if (contentType is null || !MediaTypeHeaderValue.TryParse(contentType, out var media)) return null;
        return media.MediaType.Value?.ToLowerInvariant() switch
        {
            "application/x-ndjson" or "application/jsonl" or "application/jsonlines" or "application/json-lines" => ItemUploadFormat.JsonLines,
            "application/json" => ItemUploadFormat.JsonArray,
            CsvMediaType or "application/csv" => ItemUploadFormat.Csv,
            _ => null,
        };
    }

    /// <summary>The format a file name's ending says (.jsonl or .ndjson, .json, .csv), or null.</summary>
    public static ItemUploadFormat? FromFileName(string fileName) => Path.GetExtension(fileName).ToLowerInvariant() switch
    {
        ".jsonl" or ".ndjson" => ItemUploadFormat.JsonLines,
        ".json" => ItemUploadFormat.JsonArray,
        ".csv" => ItemUploadFormat.Csv,
        _ => null,
    };
}
