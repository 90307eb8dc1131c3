using TeachServe.Core.Model;
using TeachServe.Core.Projects;

using TeachServe.Core.Simulation;

namespace TeachServe.Server.Versions;

/// <summary>A ready model version in memory: the engine's model plus what annotators see of each item.</summary>
public sealed class CompiledVersion
{
    public CompiledVersion(string projectId, int number, ProjectSettings settings, ModelVersion model, IReadOnlyList<ItemDefinition> items)
    {
        ProjectId = projectId;
        Number = number;
        Settings = settings;
        Model = model;
        var byId = items.ToDictionary(i => i.Id, StringComparer.Ordinal);
        var ordered = model.ItemIds.Select(id => byId[id]).ToArray();
        Content = ordered.Select(i => i.Content ?? new ItemContent()).ToArray();
        Explanations = ordered.Select(i => i.Explanation).ToArray();
        LabelIndex = model.Labels.Select((l, i) => (l, i)).ToDictionary(t => t.l, t => t.i, StringComparer.Ordinal);
        _features = new Lazy<ItemFeatures?>(() =>
        {
            try
            {
                return ItemFeatures.From(model, Core.Hypotheses.EmbeddingFeatures.Project(settings.Family, items));
            }
            catch (ArgumentException)
            {
                return null;
            }
        });
    }

    private readonly Lazy<ItemFeatures?> _features;

    /// <summary>The items' features for simulated learners unlike the model; null when the items have none.</summary>
    public ItemFeatures? Features => _features.Value;

    public string ProjectId { get; }
    public int Number { get; }
    public ProjectSettings Settings { get; }
    public ModelVersion Model { get; }
    /// <summary>Indexed like <see cref="ModelVersion.ItemIds"/>.</summary>
    public IReadOnlyList<ItemContent> Content { get; }
    public IReadOnlyList<string?> Explanations { get; }
    public IReadOnlyDictionary<string, int> LabelIndex { get; }
}
