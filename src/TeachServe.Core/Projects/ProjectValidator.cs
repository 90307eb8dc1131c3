namespace TeachServe.Core.Projects;

/// <summary>
/// Checks that settings and items make a project that can be compiled and taught: ranges of every setting, labels,
/// pools, ids, and what the chosen hypothesis family needs from the items. Returns every problem; never throws for bad data.
/// </summary>
public static class ProjectValidator
{
    public const int MinLabels = 2;
    public const int MaxLabels = 20;

    public static IReadOnlyList<ProjectProblem> Validate(ProjectSettings settings, IReadOnlyList<ItemDefinition> items) =>
        Validate(settings, items, ProjectSources.Folder);

    public static IReadOnlyList<ProjectProblem> Validate(ProjectSettings settings, IReadOnlyList<ItemDefinition> items, ProjectSources sources)
    {
        ArgumentNullException.ThrowIfNull(settings);
        ArgumentNullException.ThrowIfNull(sources);
        var run = new Run(sources);
        run.Settings(settings);
        run.Items(settings, items ?? []);
        return run.Problems;
    }

    /// <summary>
    /// Compile-time check of a valid project: the test pool must hold at least one whole attempt, or the test could
    /// not reach the length its error rates rest on. (A pool smaller than every attempt together only warns: retakes
    /// then reuse items, see the version summary.)
    /// </summary>
    public static ProjectProblem? TestPool(ProjectSettings settings, IReadOnlyList<ItemDefinition> items, ProjectSources sources)
    {
        ArgumentNullException.ThrowIfNull(settings);
        ArgumentNullException.ThrowIfNull(sources);
        var test = items.Count(i => i?.Pool == Pools.Test);
        if (settings.Gate?.Test is null || settings.Labels is not { Count: >= 2 } || settings.Learner is not { Lapse: >= 0 and < 1 }
            || !Teaching.GateDesign.TryCreate(settings.Gate, settings.Labels.Count, settings.Learner.Lapse, out var design, out _)
            || test >= design.Test.MaxItems)
            return null;
        return new ProjectProblem(sources.ItemsFile, null, "items",
            $"the test pool holds {test} items, and one test attempt may need {design.Test.MaxItems} (gate.test.maxItems): add test items or shorten the test");
    }

    private sealed class Run(ProjectSources sources)
    {
        public List<ProjectProblem> Problems { get; } = [];

        public void Settings(ProjectSettings s)
        {
            if (string.IsNullOrWhiteSpace(s.Name))
                Setting("name", "the project name is empty");
            Labels(s.Labels);
            Family(s.Family);
            Check("policy", SettingRules.Policy(s.Policy));
            Check("blendWeight", SettingRules.BlendWeight(s.BlendWeight));
            Learner(s.Learner);
            Gate(s.Gate);
            Cost(s.Cost);
            Guidance(s.Guidance, s.Labels);
            Live(s.Live);
            if (Problems.Count == 0 && s.Gate?.Test is not null && s.Labels is { } labels && s.Learner is { } learner)
                Check("gate.test.maxItems", SettingRules.TestDesign(s.Gate, labels.Count, learner.Lapse));
        }

        private void Labels(IReadOnlyList<string>? labels)
        {
            if (labels is null)
            {
                Setting("labels", "the labels are missing");
                return;
            }
            if (labels.Count is < MinLabels or > MaxLabels)
                Setting("labels", $"a project needs {MinLabels} to {MaxLabels} labels, not {labels.Count}");
            var first = new Dictionary<string, int>(StringComparer.Ordinal);
            for (var i = 0; i < labels.Count; i++)
            {
                var field = FieldPath.Index("labels", i);
                if (string.IsNullOrWhiteSpace(labels[i]))
                    Setting(field, "the label is empty");
                else if (!first.TryAdd(labels[i], i))
                    Setting(field, $"'{labels[i]}' is already labels[{first[labels[i]]}]");
            }
        }

        private void Family(FamilySettings? f)
        {
            if (f is null)
            {
                Setting("family", "the hypothesis family is missing");
                return;
            }
            if (!FamilyKinds.All.Contains(f.Kind))
                Setting("family.kind", $"unknown family kind '{f.Kind}'; expected {Names(FamilyKinds.All)}");
            if (f.RandomDirections < 0)
                Setting("family.randomDirections", $"must be ≥ 0, not {f.RandomDirections}");
            if (f.PerturbedCopies < 0)
                Setting("family.perturbedCopies", $"must be ≥ 0, not {f.PerturbedCopies}");
            if (f.MaxCues < 1)
                Setting("family.maxCues", $"must be ≥ 1, not {f.MaxCues}");
            if (f.CandidateCues < 1)
                Setting("family.candidateCues", $"must be ≥ 1, not {f.CandidateCues}");
            if (f.Dimensions is < Hypotheses.EmbeddingFeatures.MinDimensions or > Hypotheses.EmbeddingFeatures.MaxDimensions)
                Setting("family.dimensions", $"must be {Hypotheses.EmbeddingFeatures.MinDimensions} to {Hypotheses.EmbeddingFeatures.MaxDimensions}, not {f.Dimensions}");
            if (!(f.SimplicityBias > 0 && double.IsFinite(f.SimplicityBias)))
                Setting("family.simplicityBias", $"must be a finite number > 0, not {f.SimplicityBias}");
        }

        private void Learner(LearnerSettings? l)
        {
            if (l is null)
            {
                Setting("learner", "the learner settings are missing");
                return;
            }
            Check("learner.alpha", SettingRules.LearnerAlpha(l.Alpha));
            Check("learner.lapse", SettingRules.LearnerLapse(l.Lapse));
        }

        private void Cost(CostSettings? c)
        {
            if (c is null)
                return;
            Check("cost.perTeachingItem", SettingRules.Cost(c.PerTeachingItem));
            Check("cost.perTestItem", SettingRules.Cost(c.PerTestItem));
            Check("cost.perMinute", SettingRules.Cost(c.PerMinute));
            Check("cost.secondsPerItem", SettingRules.SecondsPerItem(c.SecondsPerItem));
            Check("cost.falseRelease", SettingRules.Cost(c.FalseRelease));
            Check("cost.failedQualified", SettingRules.Cost(c.FailedQualified));
        }

        private void Gate(GateSettings? g)
        {
            if (g is null)
            {
                Setting("gate", "the gate settings are missing");
                return;
            }
            Check("gate.targetError", SettingRules.TargetError(g.TargetError));
            Check("gate.confidence", SettingRules.Confidence(g.Confidence));
            Check("gate.maxTeachingItems", SettingRules.MaxTeachingItems(g.MaxTeachingItems));
            Check("gate.retakes", SettingRules.Retakes(g.Retakes));
            Check("gate.masteryStreak", SettingRules.MasteryStreak(g.MasteryStreak));
            Check("gate.masteryExtension", SettingRules.MasteryExtension(g.MasteryExtension));
            Check("gate.remediation", SettingRules.Remediation(g.Remediation));
            Check("gate.typicalityWeight", SettingRules.TypicalityWeight(g.TypicalityWeight));
            Check("gate.openingVariety", SettingRules.OpeningVariety(g.OpeningVariety));

            var t = g.Test;
            if (t is null)
            {
                Setting("gate.test", "the test settings are missing");
                return;
            }
            Check("gate.test.mode", SettingRules.TestMode(t.Mode));
            Check("gate.test.maxItems", SettingRules.TestMaxItems(t.MaxItems));
            Check("gate.test.delta", SettingRules.TestDelta(t.Delta, SettingRules.ValidTargetError(g.TargetError)));
            Check("gate.test.alpha", SettingRules.TestAlpha(t.Alpha));
            Check("gate.test.beta", SettingRules.TestBeta(t.Beta));
            Check("gate.test.tailItems", SettingRules.TestTailItems(t.TailItems));
            Check("gate.test.minItems", SettingRules.TestMinItems(t.MinItems));
            Check("gate.test.maxExposure", SettingRules.TestMaxExposure(t.MaxExposure));
        }

        public void Items(ProjectSettings s, IReadOnlyList<ItemDefinition> items)
        {
            var labelList = (s.Labels ?? []).Where(l => !string.IsNullOrWhiteSpace(l)).Distinct(StringComparer.Ordinal).ToList();
            var labels = new HashSet<string>(labelList, StringComparer.Ordinal);
            var ids = new Dictionary<string, int>(StringComparer.Ordinal);
            int teach = 0, test = 0;
            for (var i = 0; i < items.Count; i++)
            {
                var item = items[i];
                var path = FieldPath.Item(i);
                if (item is null)
                {
                    Item(i, path, "the item is null");
                    continue;
                }
                if (string.IsNullOrWhiteSpace(item.Id))
                    Item(i, FieldPath.Member(path, "id"), "the id is empty");
                else if (!ids.TryAdd(item.Id, i))
                    Item(i, FieldPath.Member(path, "id"), $"'{item.Id}' is already the id of items[{ids[item.Id]}]");

                if (item.Pool == Pools.Teach)
                    teach++;
                else if (item.Pool == Pools.Test)
                    test++;
                else if (item.Pool != Pools.Live)
                    Item(i, FieldPath.Member(path, "pool"), $"unknown pool '{item.Pool}'; expected {Pools.Teach}, {Pools.Test} or {Pools.Live}");

                if (item.Label is null || !labels.Contains(item.Label))
                    Item(i, FieldPath.Member(path, "label"), $"unknown label '{item.Label}'; expected {Names(labelList)}");

                ItemFeatures(i, path, item);
                ItemAttributes(i, path, item);
                if (item.Content is not { } c || (IsBlank(c.Text) && IsBlank(c.ImageUrl) && IsBlank(c.Svg)))
                    Item(i, FieldPath.Member(path, "content"), "needs at least one of text, imageUrl or svg");
                else if (!IsBlank(c.ImageUrl) && !IsWebAddress(c.ImageUrl!))
                    Item(i, FieldPath.Member(FieldPath.Member(path, "content"), "imageUrl"), "must be an absolute http or https URL with a host and no user name or password");
            }
            if (teach == 0)
                Whole("the teach pool is empty");
            if (test == 0)
                Whole("the test pool is empty");

            switch (s.Family?.Kind)
            {
                case FamilyKinds.Linear or FamilyKinds.Stumps:
                    SameFeatures(s.Family.Kind, items);
                    break;
                case FamilyKinds.Cues:
                    if (!items.Any(item => item?.Attributes is { Count: > 0 }))
                        Whole("the cues family needs attributes on the items, and no item has any");
                    break;
                case FamilyKinds.Table:
                    Table(s.Family.Table, ids, labels);
                    break;
                case FamilyKinds.Text:
                    Texts(items);
                    break;
                case FamilyKinds.Embedding:
                    Vectors(items);
                    break;
            }
        }

        private void ItemFeatures(int i, string path, ItemDefinition item)
        {
            if (item.Features is null)
                return;
            var featuresPath = FieldPath.Member(path, "features");
            foreach (var (name, value) in item.Features)
            {
                if (string.IsNullOrWhiteSpace(name))
                    Item(i, featuresPath, "a feature name is empty");
                else if (!double.IsFinite(value))
                    Item(i, FieldPath.Member(featuresPath, name), $"{value} is not a finite number");
            }
        }

        private void ItemAttributes(int i, string path, ItemDefinition item)
        {
            if (item.Attributes is null)
                return;
            var seen = new HashSet<string>(StringComparer.Ordinal);
            for (var j = 0; j < item.Attributes.Count; j++)
            {
                var field = FieldPath.Index(FieldPath.Member(path, "attributes"), j);
                var name = item.Attributes[j];
                if (string.IsNullOrWhiteSpace(name))
                    Item(i, field, "the attribute name is empty");
                else if (!seen.Add(name))
                    Item(i, field, $"'{name}' is listed more than once");
            }
        }

        /// <summary>Linear and stump hypotheses are functions of a fixed feature vector, so every item needs every feature.</summary>
        private void SameFeatures(string kind, IReadOnlyList<ItemDefinition> items)
        {
            var all = new List<string>();
            foreach (var item in items)
            {
                foreach (var name in item?.Features?.Keys ?? [])
                {
                    if (!string.IsNullOrWhiteSpace(name) && !all.Contains(name))
                        all.Add(name);
                }
            }
            if (all.Count == 0)
            {
                Whole($"the {kind} family needs numeric features on the items, and no item has any");
                return;
            }
            for (var i = 0; i < items.Count; i++)
            {
                if (items[i] is not { } item)
                    continue;
                var missing = all.Where(name => item.Features is null || !item.Features.ContainsKey(name)).ToList();
                if (missing.Count > 0)
                    Item(i, FieldPath.Member(FieldPath.Item(i), "features"), $"missing {Names(missing)} (the {kind} family needs the same features on every item)");
            }
        }

        /// <summary>The text family embeds every item's text, so each needs one, short enough for the model.</summary>
        private void Texts(IReadOnlyList<ItemDefinition> items)
        {
            for (var i = 0; i < items.Count; i++)
            {
                if (items[i] is not { } item)
                    continue;
                var field = FieldPath.Member(FieldPath.Member(FieldPath.Item(i), "content"), "text");
                var text = item.Content?.Text;
                if (IsBlank(text))
                    Item(i, field, "the text family needs a text on every item, and this one is empty");
                else if (text!.Length > Hypotheses.EmbeddingFeatures.MaxTextLength)
                    Item(i, field, $"{text.Length} characters; the text family embeds texts of at most {Hypotheses.EmbeddingFeatures.MaxTextLength}");
            }
        }

        /// <summary>The embedding family's rules are functions of one vector space: every item needs a vector of the same length, all finite.</summary>
        private void Vectors(IReadOnlyList<ItemDefinition> items)
        {
            int? length = null;
            var first = -1;
            for (var i = 0; i < items.Count; i++)
            {
                if (items[i] is not { } item)
                    continue;
                var field = FieldPath.Member(FieldPath.Item(i), "embedding");
                if (item.Embedding is not { } vector)
                {
                    Item(i, field, "the embedding family needs a vector on every item, and this one has none");
                    continue;
                }
                if (vector.Length is 0 or > Hypotheses.EmbeddingFeatures.MaxVectorLength)
                {
                    Item(i, field, $"{vector.Length} numbers; a vector has 1 to {Hypotheses.EmbeddingFeatures.MaxVectorLength}");
                    continue;
                }
                var bad = Array.FindIndex(vector, v => !float.IsFinite(v));
                if (bad >= 0)
                    Item(i, FieldPath.Index(field, bad), $"{vector[bad]} is not a finite number");
                if (length is null)
                {
                    length = vector.Length;
                    first = i;
                }
                else if (vector.Length != length)
                {
                    Item(i, field, $"{vector.Length} numbers; {FieldPath.Item(first)} has {length} (every vector needs the same length)");
                }
            }
        }

        private void Table(IReadOnlyList<TableHypothesis>? table, Dictionary<string, int> ids, HashSet<string> labels)
        {
            if (table is not { Count: > 0 })
            {
                Setting("family.table", "the table family needs at least one hypothesis");
                return;
            }
            for (var h = 0; h < table.Count; h++)
            {
                var path = FieldPath.Index("family.table", h);
                var hypothesis = table[h];
                if (hypothesis is null)
                {
                    Setting(path, "the hypothesis is null");
                    continue;
                }
                if (!(hypothesis.Prior > 0 && double.IsFinite(hypothesis.Prior)))
                    Setting(FieldPath.Member(path, "prior"), $"must be a finite number > 0, not {hypothesis.Prior}");
                if (hypothesis.Predictions is null)
                {
                    Setting(FieldPath.Member(path, "predictions"), "the predictions are missing");
                    continue;
                }
                var predictionsPath = FieldPath.Member(path, "predictions");
                foreach (var (itemId, label) in hypothesis.Predictions)
                {
                    var field = FieldPath.Member(predictionsPath, itemId);
                    if (!ids.ContainsKey(itemId))
                        Setting(field, $"unknown item '{itemId}'");
                    if (label is null || !labels.Contains(label))
                        Setting(field, $"unknown label '{label}'");
                }
            }
        }

        private void Guidance(GuidanceSettings? guidance, IReadOnlyList<string>? labels)
        {
            if (guidance is null)
                return;
            if (guidance.Instructions is { Length: > GuidanceSettings.MaxInstructions } text)
                Setting("guidance.instructions", $"must be at most {GuidanceSettings.MaxInstructions} characters, not {text.Length}");
            foreach (var (label, help) in guidance.Labels ?? new Dictionary<string, string>())
            {
                if (labels is null || !labels.Contains(label))
                    Setting($"guidance.labels.{label}", $"'{label}' is not one of the project's labels");
                else if (help is null)
                    Setting($"guidance.labels.{label}", "must be a text (leave the label out instead)");
                else if (help.Length > GuidanceSettings.MaxLabelGuidance)
                    Setting($"guidance.labels.{label}", $"must be at most {GuidanceSettings.MaxLabelGuidance} characters, not {help.Length}");
            }
        }

        private void Check(string field, string? message)
        {
            if (message is not null)
                Setting(field, message);
        }

        private void Live(LiveSettings? live)
        {
            if (live is null)
            {
                Setting("live", "the live settings are null; leave them out for the defaults");
                return;
            }
            if (!(live.ForgettingPerCheck >= 0 && live.ForgettingPerCheck <= LiveSettings.MaxForgettingPerCheck))
                Setting("live.forgettingPerCheck", $"must lie in [0, {LiveSettings.MaxForgettingPerCheck}], not {live.ForgettingPerCheck}");
            if (live.CandidateRules is < 0 or > LiveSettings.MaxCandidateRules)
                Setting("live.candidateRules", $"must be 0 to {LiveSettings.MaxCandidateRules}, not {live.CandidateRules}");
        }

        private void Setting(string field, string message) =>
            Problems.Add(new ProjectProblem(sources.SettingsFile, null, field, message));

        private void Item(int index, string field, string message)
        {
            int? line = sources.ItemLines is { } lines && index < lines.Count ? lines[index] : null;
            Problems.Add(new ProjectProblem(sources.ItemsFile, line, field, message));
        }

        private void Whole(string message) => Problems.Add(new ProjectProblem(sources.ItemsFile, null, "items", message));

        private static bool IsBlank(string? value) => string.IsNullOrWhiteSpace(value);

        /// <summary>
        /// Image addresses go into the annotator's page: only absolute http(s) with a host, so no <c>javascript:</c>,
        /// <c>data:</c> or protocol-relative address, and no credentials (OWASP XSS prevention cheat sheet, URL contexts).
        /// </summary>
        private static bool IsWebAddress(string value) =>
            Uri.TryCreate(value, UriKind.Absolute, out var uri)
            && (uri.Scheme == Uri.UriSchemeHttps || uri.Scheme == Uri.UriSchemeHttp)
            && !string.IsNullOrEmpty(uri.Host)
            && string.IsNullOrEmpty(uri.UserInfo)
            && value.StartsWith(uri.Scheme + "://", StringComparison.OrdinalIgnoreCase);

        private static string Names(IReadOnlyList<string> names) => string.Join(", ", names);
    }
}
