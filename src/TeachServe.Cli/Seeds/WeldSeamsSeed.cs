using TeachServe.Core.Projects;
using static System.FormattableString;

namespace TeachServe.Cli.Seeds;

/// <summary>
/// Invented weld seams, accept or reject, drawn as SVG from three measurements. The reference rule is linear in the
/// measurements; some test labels near its boundary are flipped, as a human reference would disagree on close calls.
/// Teaching examples are never such close calls: an annotator is taught from seams whose label the drawing shows.
/// Each drawing carries a width gauge in millimetres, so every measurement an explanation cites can be read off it.
/// </summary>
internal static class WeldSeamsSeed
{
    public const string Name = "weld-seams";
    public const int DefaultSeed = 4101;
    public const string Accept = "accept";
    public const string Reject = "reject";
    public const string BeadWidth = "bead_width_mm";
    public const string Undercut = "undercut_depth_mm";
    public const string Pores = "porosity_count";
    public const int TeachPerLabel = 120;
    public const int TestPerLabel = 50;

    // Flip a label with this probability when the seam is within this distance of the rule's boundary.
    private const double NoiseBand = 0.2;
    private const double NoiseRate = 0.2;

    /// <summary>Drawing scale: pixels per millimetre of bead width (the band is as tall as the bead is wide).</summary>
    internal const double PixelsPerMm = 9.0;

    /// <summary>Undercut notches are drawn this many times deeper than the gauge's scale (they are fractions of a millimetre).</summary>
    internal const int NotchEnlargement = 2;

    /// <summary>Positive means reject: deep undercut and pores count against a seam, a wide bead for it.</summary>
    internal static double Score(double width, double undercut, double pores) =>
        4.0 * undercut + 0.35 * pores - 0.45 * width + 2.55;

    internal static string RuleLabel(IReadOnlyDictionary<string, double> features) =>
        Score(features[BeadWidth], features[Undercut], features[Pores]) > 0 ? Reject : Accept;

    public static ProjectDefinition Generate(int seed)
    {
        var random = new Random(seed);
        var items = BalancedPools.Draw(random, "seam", [Accept, Reject], TeachPerLabel, TestPerLabel, Draw,
            teachable: item => item.Label == RuleLabel(item.Features!));
        return new ProjectDefinition(Settings(), items);
    }

    public static ProjectSettings Settings() => new()
    {
        Name = "Weld seams (teaching demo)",
        Labels = [Accept, Reject],
        Family = new FamilySettings { Kind = FamilyKinds.Linear, Seed = 1 },
        Learner = new LearnerSettings { Alpha = 1.5, Lapse = 0.05 },
        Gate = new GateSettings
        {
            TargetError = 0.15,
            Confidence = 0.8,
            MaxTeachingItems = 40,
            Test = new TestSettings { Mode = TestModes.Sequential, MaxItems = 50, Delta = 0.2, Alpha = 0.1, Beta = 0.1, TailItems = 4 },
            Retakes = 1,
        },
        Policy = PolicyNames.Adaptive,
        Guidance = new GuidanceSettings
        {
            Instructions = """
                You will see drawings of weld seams: two grey plates joined by a brown **bead**. Decide for each seam
                whether to **accept** or **reject** it. At first you get feedback after every answer; then comes a
                short check without feedback.

                What to look at:

                - **Bead width**: read it on the millimetre gauge at the right edge, where the bead's edges meet the marks.
                - **Edge notches** (undercut): dark triangles biting into the bead's edges, drawn twice as deep as the gauge's scale.
                - **Pores**: dark dots inside the bead.

                No single cue decides every seam: a wide bead can carry a few small defects. This is a teaching demo,
                not a weld-inspection qualification.
                """,
            Labels = new Dictionary<string, string>
            {
                [Accept] = "A bead wide enough for its defects: few or no pores, shallow notches or none.",
                [Reject] = "Deep edge notches, many pores, a narrow bead, or several of these together.",
            },
        },
    };

    private static ItemDefinition Draw(Random random)
    {
        var width = Math.Round(6.0 + 4.0 * random.NextDouble(), 1);
        var undercut = Math.Round(random.NextDouble() < 0.55 ? 0.3 * random.NextDouble() : 0.15 + 0.75 * random.NextDouble(), 2);
        var roll = random.NextDouble();
        var pores = roll < 0.4 ? random.Next(0, 2) : roll < 0.75 ? random.Next(2, 4) : random.Next(4, 8);

        var score = Score(width, undercut, pores);
        var ruleLabel = score > 0 ? Reject : Accept;
        var closeCall = Math.Abs(score) < NoiseBand && random.NextDouble() < NoiseRate;
        var label = closeCall ? (ruleLabel == Accept ? Reject : Accept) : ruleLabel;

        return new ItemDefinition
        {
            Id = "",
            Pool = "",
            Label = label,
            Features = new Dictionary<string, double> { [BeadWidth] = width, [Undercut] = undercut, [Pores] = pores },
            Content = new ItemContent { Svg = Drawing(random, width, undercut, pores) },
            Explanation = closeCall
                ? $"Close call: the bead width, the edge notches and the pores nearly balance; the reference inspector marked this seam {label}."
                : Explain(label, width, undercut, pores),
        };
    }

    private static string Explain(string label, double width, double undercut, int pores)
    {
        if (label == Accept)
        {
            var defects = new List<string>();
            if (undercut >= 0.05)
                defects.Add("shallow edge notches");
            if (pores > 0)
                defects.Add(pores == 1 ? "single pore" : Invariant($"{pores} pores"));
            return defects.Count == 0
                ? Invariant($"Accept: the bead reaches about the {width:0} mm marks of the gauge and is clean, with no edge notches and no pores.")
                : Invariant($"Accept: the bead reaches about the {width:0} mm marks of the gauge, wide enough that its {string.Join(" and ", defects)} {(defects is [{ } only] && only == "single pore" ? "is" : "are")} acceptable.");
        }
        // Name the cue that pushed the seam furthest from a good one (9 mm bead, 0.1 mm undercut, no pores).
        var fromUndercut = 4.0 * (undercut - 0.1);
        var fromPores = 0.35 * pores;
        var fromWidth = 0.45 * (9.0 - width);
        var largest = Math.Max(fromUndercut, Math.Max(fromPores, fromWidth));
        if (largest < 0.45 * (Math.Max(fromUndercut, 0) + fromPores + Math.Max(fromWidth, 0)))
            return Invariant($"Reject: no single defect, but together a bead only at about the {width:0} mm marks of the gauge, the edge notches and {pores} pore{(pores == 1 ? "" : "s")} are too much.");
        if (fromUndercut >= fromPores && fromUndercut >= fromWidth)
            return Invariant($"Reject: the dark notches bite deep into the bead edges (undercut of about {undercut:0.0#} mm, drawn {NotchEnlargement}× deeper).");
        if (fromPores >= fromWidth)
            return Invariant($"Reject: {pores} pores, the dark dots inside the bead.");
        return Invariant($"Reject: the bead band only reaches about the {width:0} mm marks of the gauge, too narrow to fill the joint.");
    }

    /// <summary>
    /// Two plates, the bead as a band as tall as its width, ripples, undercut notches at the edges, pores as dots, and
    /// on the right a gauge: a pair of marks at ±w/2 from the seam's centre line for each whole width w of 4–10 mm.
    /// </summary>
    private static string Drawing(Random random, double width, double undercut, int pores)
    {
        const int w = 240, h = 130;
        const double middle = h / 2.0;
        var half = width * PixelsPerMm / 2;
        var svg = new SvgWriter(w, h, "weld seam")
            .Add("<rect width='240' height='65' fill='#a2a8ae'/><rect y='65' width='240' height='65' fill='#949ba2'/>");

        var top = new double[11];
        var bottom = new double[11];
        for (var i = 0; i <= 10; i++)
        {
            top[i] = middle - half + (random.NextDouble() - 0.5) * 2.4;
            bottom[i] = middle + half + (random.NextDouble() - 0.5) * 2.4;
        }
        var bead = "M0," + SvgWriter.N(top[0]);
        for (var i = 1; i <= 10; i++)
            bead += $" L{i * 24},{SvgWriter.N(top[i])}";
        for (var i = 10; i >= 0; i--)
            bead += $" L{i * 24},{SvgWriter.N(bottom[i])}";
        svg.Add($"<path d='{bead} Z' fill='#c49c6c' stroke='#7a5f43'/>");

        var ripples = new List<string>();
        for (var x = 6; x < 234; x += 12)
            ripples.Add($"M{x},{SvgWriter.N(middle - half + 4)} Q{x + 8},{SvgWriter.N(middle)} {x},{SvgWriter.N(middle + half - 4)}");
        svg.Add($"<path d='{string.Join(' ', ripples)}' fill='none' stroke='#a37b52' stroke-width='1.2'/>");

        if (undercut >= 0.05)
        {
            var shapes = new List<string>();
            var notches = 1 + (int)(undercut * 6);
            var depth = Math.Max(undercut * PixelsPerMm * NotchEnlargement, 1.0);
            for (var n = 0; n < notches; n++)
            {
                var x = 6 + random.NextDouble() * 214;
                var span = 10 + random.NextDouble() * 8;
                var upper = random.Next(2) == 0;
                var edge = upper ? middle - half : middle + half;
                var tip = upper ? edge - depth : edge + depth;
                shapes.Add($"M{SvgWriter.N(x)},{SvgWriter.N(edge)} L{SvgWriter.N(x + span / 2)},{SvgWriter.N(tip)} L{SvgWriter.N(x + span)},{SvgWriter.N(edge)} Z");
            }
            svg.Add($"<path d='{string.Join(' ', shapes)}' fill='#3b3f45'/>");
        }

        if (pores > 0)
        {
            svg.Add("<g fill='#2d2925' stroke='#5e4a36' stroke-width='0.8'>");
            for (var p = 0; p < pores; p++)
            {
                var cx = 10 + random.NextDouble() * 220;
                var cy = middle - half + 5 + random.NextDouble() * (2 * half - 10);
                var r = 2.0 + random.NextDouble() * 1.5;
                svg.Add($"<circle cx='{SvgWriter.N(cx)}' cy='{SvgWriter.N(cy)}' r='{SvgWriter.N(r)}'/>");
            }
            svg.Add("</g>");
        }
        return svg.Add(Gauge(w, h, middle)).ToString();
    }

    /// <summary>The width gauge: a light strip at the right edge, a mark pair per whole millimetre of width, labels 4, 6, 8, 10.</summary>
    private static string Gauge(int w, int h, double middle)
    {
        var marks = new List<string>();
        var labels = new List<string>();
        for (var mm = 4; mm <= 10; mm++)
        {
            var offset = mm * PixelsPerMm / 2;
            var length = mm % 2 == 0 ? 7 : 4;
            marks.Add($"M{w - length},{SvgWriter.N(middle - offset)} H{w} M{w - length},{SvgWriter.N(middle + offset)} H{w}");
            if (mm % 2 == 0)
                labels.Add($"<text x='{w - 9}' y='{SvgWriter.N(middle - offset + 3)}'>{mm}</text>");
        }
        return $"<rect x='{w - 22}' width='22' height='{h}' fill='#ffffff' fill-opacity='0.55'/>"
            + $"<path d='{string.Join(' ', marks)}' stroke='#1f2328' stroke-width='1'/>"
            + $"<g font-family='sans-serif' font-size='7' text-anchor='end' fill='#1f2328'>{string.Join("", labels)}<text x='{w - 2}' y='{h - 3}'>mm</text></g>";
    }

    public static string Readme(int seed)
    {
        var items = Generate(seed).Items;
        var flipped = items.Count(i => i.Label != RuleLabel(i.Features!));
        return $"""
        # weld-seams

        An invented teaching demo: annotators learn to mark drawn weld seams `accept` or `reject`.
        Every seam, measurement, drawing and label here was made up by a generator; none comes from real welds or inspections.

        > **Caution.** This is a teaching demo, not a weld-inspection qualification. Passing it says nothing about anyone's
        > ability to inspect real welds. For real work, follow the applicable welding codes and standards and rely on
        > qualified inspectors.

        - Items: {2 * TeachPerLabel} teach and {2 * TestPerLabel} test, half of each `accept`, half `reject`.
        - Features: `{BeadWidth}`, `{Undercut}`, `{Pores}`; each item's SVG is drawn from them (bead band as tall as its
          width, read on the millimetre gauge at the right edge; dark notches for undercut, drawn {NotchEnlargement}× deeper;
          dots for pores). The reference rule is linear in the features; {flipped} of the {items.Count} labels, all of test
          items close to its boundary, are flipped to play the part of close calls (teaching examples are never close
          calls). The explanation names the cue that decided, in terms the drawing shows.
        - Hypothesis family: `linear`.

        Generated with `teachserve seed generate {Name} --out seed-projects/{Name} --seed {seed}`.
        """;
    }
}
