using TeachServe.Core.Projects;
using static System.FormattableString;

namespace TeachServe.Cli.Seeds;

/// <summary>
/// Invented leaves drawn as SVG, labelled <c>healthy</c>, <c>fungal-spots</c> or <c>nutrient-deficiency</c> from three
/// measurements. The reference rule uses one threshold per step, which the stumps family can express:
/// many spots mean fungal spots; otherwise a yellowed blade means nutrient deficiency; otherwise healthy.
/// Spot size is a distractor: fungal spots tend to be larger, but size never decides.
/// </summary>
internal static class LeafSymptomsSeed
{
    public const string Name = "leaf-symptoms";
    public const int DefaultSeed = 4303;
    public const string Healthy = "healthy";
    public const string Fungal = "fungal-spots";
    public const string Deficiency = "nutrient-deficiency";
    public const string SpotCount = "spot_count";
    public const string SpotSize = "spot_size_mm";
    public const string Yellowing = "yellowing";
    public const int TeachPerLabel = 70;
    public const int TestPerLabel = 34;
    public const int FungalSpots = 8;
    public const double DeficientYellowing = 0.5;

    /// <summary>Drawing scale: a spot of diameter d mm is drawn with radius 1.3·d px, so 2.6 px per millimetre.</summary>
    internal const double PixelsPerMm = 2.6;

    /// <summary>Length of the scale bar in the drawing's corner.</summary>
    internal const int ScaleBarMm = 5;

    private static readonly (int R, int G, int B) Green = (66, 140, 58);
    private static readonly (int R, int G, int B) Yellow = (214, 196, 72);

    internal static string RuleLabel(IReadOnlyDictionary<string, double> features) =>
        features[SpotCount] >= FungalSpots ? Fungal
        : features[Yellowing] >= DeficientYellowing ? Deficiency
        : Healthy;

    public static ProjectDefinition Generate(int seed)
    {
        var random = new Random(seed);
        var items = BalancedPools.Draw(random, "leaf", [Healthy, Fungal, Deficiency], TeachPerLabel, TestPerLabel, Draw);
        return new ProjectDefinition(Settings(), items);
    }

    public static ProjectSettings Settings() => new()
    {
        Name = "Leaf symptoms (teaching demo)",
        Labels = [Healthy, Fungal, Deficiency],
        Family = new FamilySettings { Kind = FamilyKinds.Stumps, Seed = 1 },
        Learner = new LearnerSettings { Alpha = 1.5, Lapse = 0.05 },
        Gate = new GateSettings
        {
            TargetError = 0.12,
            Confidence = 0.8,
            MaxTeachingItems = 40,
            Test = new TestSettings { Mode = TestModes.Sequential, MaxItems = 50, Delta = 0.2, Alpha = 0.1, Beta = 0.1, TailItems = 4 },
            Retakes = 1,
        },
        Policy = PolicyNames.Adaptive,
        Guidance = new GuidanceSettings
        {
            Instructions = """
                You will see drawings of houseplant leaves. Tell for each leaf whether it looks **healthy**, shows
                **fungal spots**, or shows a **nutrient deficiency**. At first you get feedback after every answer;
                then comes a short check without feedback.

                What to look at:

                - **Spots**: how many brown spots with pale rims the leaf has. Count them.
                - **Colour**: how far the leaf has turned from green to yellow.
                - The scale bar in the corner shows 5 mm, for the size of the spots.

                The leaves are invented for practice; this is not advice on diagnosing real plants.
                """,
            Labels = new Dictionary<string, string>
            {
                [Healthy] = "Green, with no spots or only a few small marks.",
                [Fungal] = "Many brown spots with pale rims, whatever the leaf's colour.",
                [Deficiency] = "Yellowed between green veins, with only a few spots.",
            },
        },
    };

    private static ItemDefinition Draw(Random random)
    {
        // Sample around one of the three conditions, with ranges that overlap near the thresholds; the rule then labels.
        double count, size, yellowing;
        switch (random.Next(3))
        {
            case 0:
                count = random.Next(0, 5);
                size = 0.5 + random.NextDouble();
                yellowing = 0.4 * random.NextDouble();
                break;
            case 1:
                count = random.Next(FungalSpots, 29);
                size = 1.2 + 3.3 * random.NextDouble();
                yellowing = 0.7 * random.NextDouble();
                break;
            default:
                count = random.Next(0, 7);
                size = 0.5 + 1.5 * random.NextDouble();
                yellowing = 0.45 + 0.55 * random.NextDouble();
                break;
        }
        var features = new Dictionary<string, double>
        {
            [SpotCount] = count,
            [SpotSize] = Math.Round(size, 1),
            [Yellowing] = Math.Round(yellowing, 2),
        };
        var label = RuleLabel(features);
        return new ItemDefinition
        {
            Id = "",
            Pool = "",
            Label = label,
            Features = features,
            Content = new ItemContent { Svg = Drawing(random, (int)count, features[SpotSize], features[Yellowing]) },
            Explanation = Explain(label, (int)count, features[SpotSize], features[Yellowing]),
        };
    }

    private static string Explain(string label, int count, double size, double yellowing) => label switch
    {
        Fungal => Invariant($"Fungal spots: {count} brown spots with pale rims are spread over the blade; that many spots decide it, whatever their size."),
        Deficiency => Invariant($"Nutrient deficiency: the blade has turned yellow between green veins ({yellowing * 100:0}% yellowed) and has only {count} spot{(count == 1 ? "" : "s")}."),
        _ => count == 0
            ? Invariant($"Healthy: evenly green ({yellowing * 100:0}% yellowed) and spotless.")
            : Invariant($"Healthy: mostly green ({yellowing * 100:0}% yellowed) with only {count} small mark{(count == 1 ? "" : "s")} (about {size:0.0} mm across; the bar is {ScaleBarMm} mm); a few marks are normal wear."),
    };

    /// <summary>A leaf blade from two cubic curves, tinted green→yellow, green veins, brown spots with pale rims.</summary>
    private static string Drawing(Random random, int count, double size, double yellowing)
    {
        const double baseX = 30, tipX = 190, middle = 75;
        var halfWidth = 42 + random.NextDouble() * 14;
        var lean = (random.NextDouble() - 0.5) * 10;
        var svg = new SvgWriter(220, 150, "leaf")
            .Add("<rect width='220' height='150' fill='#f4f1e8'/>")
            .Add($"<path d='M8,{SvgWriter.N(middle + 8)} L{baseX},{middle}' stroke='#5b7a3a' stroke-width='3' fill='none'/>");

        var upper = Invariant($"C{baseX + 35},{SvgWriter.N(middle - halfWidth + lean)} {tipX - 55},{SvgWriter.N(middle - halfWidth + lean)} {tipX},{SvgWriter.N(middle + lean / 2)}");
        var lower = Invariant($"C{tipX - 55},{SvgWriter.N(middle + halfWidth + lean)} {baseX + 35},{SvgWriter.N(middle + halfWidth + lean)} {baseX},{middle}");
        svg.Add($"<path d='M{baseX},{middle} {upper} {lower} Z' fill='{SvgWriter.Mix(Green, Yellow, yellowing)}' stroke='#3d5e2c' stroke-width='1.5'/>");

        svg.Add("<g stroke='#3f7a34' stroke-width='1.2' fill='none'>");
        svg.Add($"<path d='M{baseX},{middle} L{tipX - 4},{SvgWriter.N(middle + lean / 2)}'/>");
        for (var v = 1; v <= 5; v++)
        {
            var x = baseX + v * 25;
            var y = middle + lean * (x - baseX) / (2 * (tipX - baseX));
            var reach = HalfWidthAt(x + 16, halfWidth) * 0.85;
            svg.Add($"<path d='M{SvgWriter.N(x)},{SvgWriter.N(y)} L{SvgWriter.N(x + 16)},{SvgWriter.N(y - reach)} M{SvgWriter.N(x)},{SvgWriter.N(y)} L{SvgWriter.N(x + 16)},{SvgWriter.N(y + reach)}'/>");
        }
        svg.Add("</g>");

        if (count > 0)
        {
            svg.Add("<g fill='#6a4322' stroke='#c8b466' stroke-width='0.7'>");
            var radius = size * PixelsPerMm / 2;
            for (var s = 0; s < count; s++)
            {
                var x = 50 + random.NextDouble() * 120;
                var reach = Math.Max(HalfWidthAt(x, halfWidth) * 0.8 - radius, 0);
                var y = middle + lean * (x - baseX) / (2 * (tipX - baseX)) + (random.NextDouble() * 2 - 1) * reach;
                var r = Math.Max(radius * (0.75 + random.NextDouble() * 0.5), 1.6);
                svg.Add($"<circle cx='{SvgWriter.N(x)}' cy='{SvgWriter.N(y)}' r='{SvgWriter.N(r)}'/>");
            }
            svg.Add("</g>");
        }
        var bar = ScaleBarMm * PixelsPerMm;
        return svg.Add($"<path d='M{SvgWriter.N(186 - bar)},143 H186 M{SvgWriter.N(186 - bar)},140 V146 M186,140 V146' stroke='#1f2328' stroke-width='1' fill='none'/>")
            .Add($"<text x='189' y='146' font-family='sans-serif' font-size='8' fill='#1f2328'>{ScaleBarMm} mm</text>")
            .ToString();
    }

    /// <summary>Roughly the blade's half-width at <paramref name="x"/>: a parabola through base and tip, so no trigonometry is needed.</summary>
    private static double HalfWidthAt(double x, double halfWidth)
    {
        var t = (x - 110) / 80;
        return halfWidth * 0.75 * Math.Max(1 - t * t, 0);
    }

    public static string Readme(int seed) => $"""
        # leaf-symptoms

        An invented teaching demo: annotators learn to tell drawn leaves that are `healthy`, show `fungal-spots`, or show
        `nutrient-deficiency`. Every leaf, measurement, drawing and label was made up by a generator; this is not guidance
        for diagnosing real plants.

        - Items: {3 * TeachPerLabel} teach and {3 * TestPerLabel} test, a third of each per label.
        - Features: `{SpotCount}`, `{SpotSize}`, `{Yellowing}` (0 = green, 1 = fully yellow); each item's SVG is drawn from them,
          with a {ScaleBarMm} mm scale bar in the corner so spot sizes can be read off the drawing.
          The reference rule: {FungalSpots} or more spots is `fungal-spots`; otherwise yellowing of {DeficientYellowing} or more is
          `nutrient-deficiency`; otherwise `healthy`. Spot size is a distractor.
        - Hypothesis family: `stumps`.

        Generated with `teachserve seed generate {Name} --out seed-projects/{Name} --seed {seed}`.
        """;
}
