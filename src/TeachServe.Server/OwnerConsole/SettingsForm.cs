using System.Globalization;
using System.Text.Json.Nodes;
using TeachServe.Server.Projects;

namespace TeachServe.Server.OwnerConsole;

/// <summary>
/// The console's settings form as a JSON merge patch of the project document, so it is checked by the same rules as
/// the API's patch. Numbers that do not read as numbers are refused here, named by their path in the document.
/// </summary>
public static class SettingsForm
{
    /// <summary>Form field → path in the project document (how problems name it).</summary>
    public static readonly IReadOnlyDictionary<string, string> Paths = new Dictionary<string, string>
    {
        ["policy"] = "policy",
        ["targetError"] = "gate.targetError",
        ["confidence"] = "gate.confidence",
        ["maxTeachingItems"] = "gate.maxTeachingItems",
        ["retakes"] = "gate.retakes",
        ["testMode"] = "gate.test.mode",
        ["testMaxItems"] = "gate.test.maxItems",
        ["testDelta"] = "gate.test.delta",
        ["testAlpha"] = "gate.test.alpha",
        ["testBeta"] = "gate.test.beta",
        ["testTailItems"] = "gate.test.tailItems",
        ["testMinItems"] = "gate.test.minItems",
        ["releasedMessage"] = "completion.releasedMessage",
        ["failedMessage"] = "completion.failedMessage",
        ["continueUrl"] = "completion.continueUrl",
        ["continueLabel"] = "completion.continueLabel",
    };

    public static (JsonObject Patch, List<FieldProblem> Problems) ToPatch(IFormCollection form)
    {
        var problems = new List<FieldProblem>();
        JsonNode? Number(string name, bool integer)
        {
            var text = form[name].ToString().Trim();
            if (integer && int.TryParse(text, NumberStyles.Integer, CultureInfo.InvariantCulture, out var i)) return JsonValue.Create(i);
            if (!integer && double.TryParse(text, NumberStyles.Float, CultureInfo.InvariantCulture, out var d) && double.IsFinite(d)) return JsonValue.Create(d);
            problems.Add(new FieldProblem(Paths[name], integer ? "must be a whole number" : "must be a number such as 0.15"));
            return null;
        }
        JsonNode? Text(string name) => form[name].ToString().Trim() is { Length: > 0 } t ? JsonValue.Create(t) : null;

        var patch = new JsonObject
        {
            ["policy"] = form["policy"].ToString(),
            ["gate"] = new JsonObject
            {
                ["targetError"] = Number("targetError", false),
                ["confidence"] = Number("confidence", false),
                ["maxTeachingItems"] = Number("maxTeachingItems", true),
                ["retakes"] = Number("retakes", true),
                ["requireBeliefAfterTest"] = form["requireBeliefAfterTest"] == "true",
                ["test"] = new JsonObject
                {
                    ["mode"] = form["testMode"].ToString(),
                    ["maxItems"] = Number("testMaxItems", true),
                    ["delta"] = Number("testDelta", false),
                    ["alpha"] = Number("testAlpha", false),
                    ["beta"] = Number("testBeta", false),
                    ["tailItems"] = Number("testTailItems", true),
                    ["minItems"] = Number("testMinItems", true),
                },
            },
            ["completion"] = new JsonObject
            {
                ["releasedMessage"] = Text("releasedMessage"),
                ["failedMessage"] = Text("failedMessage"),
                ["continueUrl"] = Text("continueUrl"),
                ["continueLabel"] = Text("continueLabel"),
            },
        };
        return (patch, problems);
    }
}
