using System.Net.Http.Json;
using System.Text;
using System.Text.Json;
using System.Text.Json.Nodes;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Embedding;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Tests;

/// <summary>Projects whose items are texts only (family <c>text</c>) or vectors sent by the platform (family <c>embedding</c>).</summary>
public sealed class TextItemTests
{
    private static readonly string[] Praise =
    [
        "The parcel arrived early and everything was perfect", "Lovely service, thank you so much", "Great quality, I am very happy with it",
        "The staff were friendly and helpful", "Fantastic experience from start to finish", "Works exactly as described, brilliant",
        "Quick delivery and careful packing, well done", "I really enjoyed using it, five stars", "Excellent value and a pleasure to use",
        "Wonderful support, my question was answered at once",
    ];

    private static readonly string[] Problems =
    [
        "The parcel never arrived and nobody replies", "The item broke after one day", "I was charged twice for the same order",
        "The screen is cracked and the box was crushed", "Support ignored my three emails", "It stopped working and makes a burning smell",
        "Wrong size sent and the return label does not work", "The app crashes every time I open it", "Still waiting for my refund after a month",
        "Half of the pieces were missing from the box",
    ];

    private static readonly string[] Suffixes = ["", ".", "!", " today.", " this week.", " again."];

    /// <summary>Invented short reviews, label from the sentence list they come from; teach and test items alternate.</summary>
    internal static (string Jsonl, Dictionary<string, string> Truth) TextItems(int perLabel)
    {
        var truth = new Dictionary<string, string>(StringComparer.Ordinal);
        var lines = new StringBuilder();
        var n = 0;
        foreach (var (label, sentences) in new[] { ("praise", Praise), ("problem", Problems) })
        {
            for (var i = 0; i < perLabel; i++)
            {
                var text = sentences[i % sentences.Length] + Suffixes[i / sentences.Length % Suffixes.Length];
                truth[text] = label;
                lines.Append(JsonSerializer.Serialize(new
                {
                    id = $"r{n:000}", pool = n % 2 == 0 ? "teach" : "test", label,
                    content = new { text }, explanation = label == "praise" ? "The customer is pleased." : "The customer reports a problem.",
                })).Append('\n');
                n++;
            }
        }
        return (lines.ToString(), truth);
    }

    internal static JsonObject TextProject(string kind = "text")
    {
        var project = TestApp.ProjectJson(maxTeaching: 12, testItems: 8);
        project["labels"] = new JsonArray("praise", "problem");
        project["family"] = new JsonObject { ["kind"] = kind, ["dimensions"] = 8 };
        return project;
    }

    [Fact]
    public async Task A_text_project_embeds_its_items_once_compiles_and_releases_an_honest_annotator()
    {
        using var app = new TestApp();
        var (items, truth) = TextItems(30);
        var keys = await app.CreateProjectAsync(TextProject());
        var owner = app.Client(keys.OwnerKey);
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items", Api.Jsonl(items)), 200);

        byte[] first;
        using (var scope = app.Services.CreateScope())
        {
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            var rows = await db.Items.AsNoTracking().Where(i => i.ProjectId == keys.ProjectId).ToListAsync();
            Assert.Equal(60, rows.Count);
            Assert.All(rows, r => Assert.Equal(SentenceEmbedder.Dimension * sizeof(float), r.Embedding!.Length));
            Assert.All(rows, r => Assert.Equal(SentenceEmbedder.ModelName, r.EmbeddingModel));
            first = rows.Single(r => r.ItemId == "r000").Embedding!;
        }

        var version = await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/versions", null), 201);
        var vectors = version["summary"]!["vectors"]!;
        Assert.Equal(SentenceEmbedder.ModelName, vectors["model"]!.GetValue<string>());
        Assert.Equal(SentenceEmbedder.Dimension, vectors["length"]!.GetValue<int>());
        Assert.Equal(8, vectors["dimensions"]!.GetValue<int>());
        Assert.True(version["summary"]!["memoryBytes"]!.GetValue<long>() > 0);

        // Uploading the same items again embeds nothing new: the stored vector is the one computed at the first upload.
        var again = await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items", Api.Jsonl(items)), 200);
        Assert.Equal(60, again["unchanged"]!.GetValue<int>());
        using (var scope = app.Services.CreateScope())
        {
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            Assert.Equal(first, (await db.Items.AsNoTracking().SingleAsync(i => i.ProjectId == keys.ProjectId && i.ItemId == "r000")).Embedding);
        }

        // The annotator reads the text, never a vector, and answers by it.
        var session = await app.StartSessionAsync(keys);
        var (final, responses) = await TestApp.RunAsync(session, (item, _) =>
        {
            Assert.Null(item["content"]!["embedding"]);
            return truth[item["content"]!["text"]!.GetValue<string>()];
        });
        Assert.Equal("released", final["phase"]!.GetValue<string>());
        Assert.NotEmpty(responses);
    }

    [Fact]
    public async Task Items_uploaded_before_the_project_became_a_text_project_are_embedded_when_it_compiles()
    {
        using var app = new TestApp();
        var (items, truth) = TextItems(20);
        var keys = await app.CreateProjectAsync(TextProject("cues"));
        var owner = app.Client(keys.OwnerKey);
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items", Api.Jsonl(items)), 200);
        using (var scope = app.Services.CreateScope())
        {
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            Assert.True(await db.Items.AllAsync(i => i.ProjectId != keys.ProjectId || i.Embedding == null));
        }

        await Api.JsonAsync(await owner.PatchAsync($"/api/v1/projects/{keys.ProjectId}",
            Api.RawJson("""{"family":{"kind":"text","dimensions":8}}""")), 200);
        var version = await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/versions", null), 201);
        Assert.Equal(SentenceEmbedder.ModelName, version["summary"]!["vectors"]!["model"]!.GetValue<string>());
        using (var scope = app.Services.CreateScope())
        {
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            Assert.Equal(40, await db.Items.CountAsync(i => i.ProjectId == keys.ProjectId && i.EmbeddingModel == SentenceEmbedder.ModelName));
        }

        var (final, _) = await TestApp.RunAsync(await app.StartSessionAsync(keys), (item, _) => truth[item["content"]!["text"]!.GetValue<string>()]);
        Assert.Equal("released", final["phase"]!.GetValue<string>());
    }

    [Fact]
    public async Task Text_and_vector_problems_answer_422_naming_line_and_field()
    {
        using var app = new TestApp();
        var keys = await app.CreateProjectAsync(TextProject());
        var owner = app.Client(keys.OwnerKey);
        var body = string.Join('\n',
            """{"id":"a","pool":"teach","label":"praise","content":{"text":"Fine."}}""",
            """{"id":"b","pool":"teach","label":"praise","content":{"text":"  ","imageUrl":"https://example.org/b.png"}}""",
            JsonSerializer.Serialize(new { id = "c", pool = "test", label = "problem", content = new { text = new string('w', 501) } }));
        var problem = await Api.ProblemAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items", Api.Jsonl(body)), 422);
        var errors = problem["errors"]!.AsArray();
        Assert.Contains(errors, e => e!["line"]!.GetValue<int>() == 2 && e["field"]!.GetValue<string>() == "content.text");
        Assert.Contains(errors, e => e!["line"]!.GetValue<int>() == 3 && e["field"]!.GetValue<string>() == "content.text"
            && e["reason"]!.GetValue<string>().Contains("501 characters", StringComparison.Ordinal));

        var vectors = await app.CreateProjectAsync(TextProject("embedding"));
        var vectorOwner = app.Client(vectors.OwnerKey);
        var mismatch = string.Join('\n',
            """{"id":"a","pool":"teach","label":"praise","content":{"text":"one"},"embedding":[0.1,0.2,0.3]}""",
            """{"id":"b","pool":"test","label":"problem","content":{"text":"two"},"embedding":[0.1,0.2]}""",
            """{"id":"c","pool":"test","label":"problem","content":{"text":"three"}}""");
        problem = await Api.ProblemAsync(await vectorOwner.PostAsync($"/api/v1/projects/{vectors.ProjectId}/items", Api.Jsonl(mismatch)), 422);
        errors = problem["errors"]!.AsArray();
        Assert.Contains(errors, e => e!["line"]!.GetValue<int>() == 2 && e["field"]!.GetValue<string>() == "embedding"
            && e["reason"]!.GetValue<string>().Contains("2 numbers; items[0] has 3", StringComparison.Ordinal));
        Assert.Contains(errors, e => e!["line"]!.GetValue<int>() == 3 && e["field"]!.GetValue<string>() == "embedding");

        // Too many labels for a project: refused when the project is created, naming the field.
        var crowded = TextProject();
        crowded["labels"] = new JsonArray([.. Enumerable.Range(0, 21).Select(i => (JsonNode)JsonValue.Create($"label{i}"))]);
        problem = await Api.ProblemAsync(await app.Client(TestApp.AdminKey).PostAsJsonAsync("/api/v1/projects", crowded), 422);
        Assert.Contains("labels", problem.ToJsonString(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task An_embedding_project_compiles_the_platforms_vectors()
    {
        using var app = new TestApp();
        var (items, truth) = TextItems(20);
        // Stand-in platform vectors: 48 numbers, the class in the first two, seeded noise elsewhere.
        var random = new Random(17);
        var withVectors = string.Join('\n', items.Split('\n', StringSplitOptions.RemoveEmptyEntries).Select(line =>
        {
            var item = JsonNode.Parse(line)!.AsObject();
            var praise = item["label"]!.GetValue<string>() == "praise";
            item["embedding"] = new JsonArray([.. Enumerable.Range(0, 48).Select(j =>
                (JsonNode)JsonValue.Create((j < 2 ? (praise ? 1.0 : -1.0) : 0.0) + (0.3 * ((random.NextDouble() * 2) - 1))))]);
            return item.ToJsonString();
        }));
        var keys = await app.ReadyProjectAsync(TextProject("embedding"), withVectors);
        var version = await Api.JsonAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/versions/1"), 200);
        var vectors = version["summary"]!["vectors"]!;
        Assert.Null(vectors["model"]);
        Assert.Equal(48, vectors["length"]!.GetValue<int>());

        var session = await app.StartSessionAsync(keys);
        var (final, _) = await TestApp.RunAsync(session, (item, _) => truth[item["content"]!["text"]!.GetValue<string>()]);
        Assert.Equal("released", final["phase"]!.GetValue<string>());
    }
}
