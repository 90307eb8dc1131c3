using System.Net.Http.Json;
using System.Text.Json.Nodes;
using TeachServe.Core;
using TeachServe.Core.Simulation;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Tests;

/// <summary>
/// Drives simulated annotators (the switching learner of DESIGN 2.2) through the real HTTP API: the learner sees
/// what an annotator sees (the item content, then the feedback) and answers with its held rule or a lapse.
/// The item shown is recognised by its content, since item refs are opaque.
/// </summary>
public static class SimulatedAnnotators
{
    public sealed record Run(string SessionId, string WorkerRef, string Phase, int Steps);

    public static async Task<Run> RunAsync(
        TestApp app, TestApp.Keys keys, string workerRef, double alpha, double lapse, ulong seed,
        LearnerVariant variant = LearnerVariant.Assumed, int maxSteps = 400)
    {
        var s = await app.StartSessionAsync(keys, workerRef);
        var session = await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}"), 200);
        var version = await app.Service<ModelVersionCache>().GetAsync(keys.ProjectId, session["modelVersion"]!.GetValue<int>(), CancellationToken.None);
        var byText = new Dictionary<string, int>(StringComparer.Ordinal);
        for (var i = 0; i < version.Content.Count; i++) byText[version.Content[i].Text!] = i;
        var learner = new SimulatedLearner(version.Model, variant, alpha, lapse, version.Settings.Gate.TargetError, new SeededRandom(seed));

        for (var step = 0; step < maxSteps; step++)
        {
            var next = await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);
            if (next["item"] is not { } item) return new Run(s.SessionId, workerRef, next["phase"]!.GetValue<string>(), step);
            var index = byText[item["content"]!["text"]!.GetValue<string>()];
            var teaching = next["phase"]!.GetValue<string>() == "teaching";
            var label = version.Model.Labels[learner.Answer(index)];
            var body = await Api.JsonAsync(await s.Annotator.PostAsJsonAsync($"/api/v1/sessions/{s.SessionId}/answers", new
            {
                step = next["step"]!.GetValue<int>(),
                itemRef = item["ref"]!.GetValue<string>(),
                label,
            }), 200);
            if (teaching) learner.SeeFeedback(index);
            var phase = body["phase"]!.GetValue<string>();
            if (phase is "released" or "failed") return new Run(s.SessionId, workerRef, phase, step + 1);
        }
        throw new InvalidOperationException($"The session of {workerRef} did not end in {maxSteps} steps.");
    }

    /// <summary>The project's exported event log, one JSON object per line.</summary>
    public static async Task<List<JsonNode>> EventsAsync(HttpClient owner, string projectId)
    {
        var text = await (await owner.GetAsync($"/api/v1/projects/{projectId}/events")).Content.ReadAsStringAsync();
        return text.Split('\n', StringSplitOptions.RemoveEmptyEntries).Select(l => JsonNode.Parse(l)!).ToList();
    }
}
