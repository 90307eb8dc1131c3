using TeachServe.Core.Hypotheses;
using TeachServe.Core.Projects;
using TeachServe.Embedding;

namespace TeachServe.Cli.Commands;

/// <summary>
/// Loads a project folder for the commands. A <c>text</c> project's item texts are embedded here, as the server embeds
/// them at upload (folders hold no vectors, and the model is in the package, so this works offline), and every
/// vector project's items get their principal-component features, which learners unlike the model read.
/// </summary>
internal static class ProjectLoader
{
    public static ProjectDefinition Load(string directory)
    {
        var project = ProjectFolder.Load(directory);
        var items = project.Items;
        string? model = null;
        if (project.Settings.Family.Kind == FamilyKinds.Text)
        {
            using var embedder = new SentenceEmbedder();
            var vectors = embedder.Embed(items.Select(i => i.Content?.Text ?? "").ToArray());
            items = items.Select((item, i) => item with { Embedding = vectors[i] }).ToArray();
            model = SentenceEmbedder.ModelName;
        }
        return new ProjectDefinition(project.Settings, EmbeddingFeatures.Project(project.Settings.Family, items)) { EmbeddingModel = model };
    }
}
