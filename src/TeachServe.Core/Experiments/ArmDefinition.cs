using TeachServe.Core.Projects;
using TeachServe.Core.Teaching;

namespace TeachServe.Core.Experiments;

/// <summary>One configuration under test: a policy and optional overrides of the project's session options.</summary>
public sealed record ArmDefinition
{
    public required string Name { get; init; }

    /// <summary>One of <see cref="PolicyNames"/>.</summary>
    public required string Policy { get; init; }

    /// <summary>The learner's alpha the teacher assumes in this arm; <see langword="null"/> = as the base options say.</summary>
    public double? LearnerAlpha { get; init; }

    /// <summary>Weight of the stochastic-greedy gain in the adaptive rule (DESIGN 2.4); <see langword="null"/> = as the base options say.</summary>
    public double? BlendWeight { get; init; }

    /// <summary>Gate settings to change; fields left <see langword="null"/> keep the base value.</summary>
    public GateOverride? Gate { get; init; }

    /// <summary>The session options of this arm: <paramref name="baseOptions"/> with the policy and every given override applied.</summary>
    public SessionOptions Apply(SessionOptions baseOptions)
    {
        ArgumentNullException.ThrowIfNull(baseOptions);
        return baseOptions with
        {
            Policy = Policy,
            Alpha = LearnerAlpha ?? baseOptions.Alpha,
            BlendWeight = BlendWeight ?? baseOptions.BlendWeight,
            Gate = Gate is null ? baseOptions.Gate : Gate.ApplyTo(baseOptions.Gate),
        };
    }
}

/// <summary>A partial override of <see cref="GateSettings"/>: each given field replaces the base value.</summary>
public sealed record GateOverride
{
    public double? TargetError { get; init; }
    public double? Confidence { get; init; }
    public int? MaxTeachingItems { get; init; }
    public TestOverride? Test { get; init; }
    public int? Retakes { get; init; }
    /// <summary>Arms may compare teaching with and without the mastery streak and remediation.</summary>
    public int? MasteryStreak { get; init; }
    public int? MasteryExtension { get; init; }
    public string? Remediation { get; init; }
    /// <summary>Arms may compare typical items first (<see cref="GateSettings.TypicalityWeight"/>) with the project's value on its own annotators.</summary>
    public double? TypicalityWeight { get; init; }
    public int? OpeningVariety { get; init; }

    public GateSettings ApplyTo(GateSettings gate)
    {
        ArgumentNullException.ThrowIfNull(gate);
        return gate with
        {
            TargetError = TargetError ?? gate.TargetError,
            Confidence = Confidence ?? gate.Confidence,
            MaxTeachingItems = MaxTeachingItems ?? gate.MaxTeachingItems,
            Test = Test is null ? gate.Test : Test.ApplyTo(gate.Test),
            Retakes = Retakes ?? gate.Retakes,
            MasteryStreak = MasteryStreak ?? gate.MasteryStreak,
            MasteryExtension = MasteryExtension ?? gate.MasteryExtension,
            Remediation = Remediation ?? gate.Remediation,
            TypicalityWeight = TypicalityWeight ?? gate.TypicalityWeight,
            OpeningVariety = OpeningVariety ?? gate.OpeningVariety,
        };
    }
}

/// <summary>A partial override of <see cref="TestSettings"/>: each given field replaces the base value.</summary>
public sealed record TestOverride
{
    public string? Mode { get; init; }
    public int? MaxItems { get; init; }
    public double? Delta { get; init; }
    public double? Alpha { get; init; }
    public double? Beta { get; init; }
    public int? TailItems { get; init; }

    public TestSettings ApplyTo(TestSettings test)
    {
        ArgumentNullException.ThrowIfNull(test);
        return test with
        {
            Mode = Mode ?? test.Mode,
            MaxItems = MaxItems ?? test.MaxItems,
            Delta = Delta ?? test.Delta,
            Alpha = Alpha ?? test.Alpha,
            Beta = Beta ?? test.Beta,
            TailItems = TailItems ?? test.TailItems,
        };
    }
}
