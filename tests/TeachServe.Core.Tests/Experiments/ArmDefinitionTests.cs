using TeachServe.Core.Experiments;
using TeachServe.Core.Projects;
using TeachServe.Core.Teaching;

namespace TeachServe.Core.Tests.Experiments;

public class ArmDefinitionTests
{
    private static readonly SessionOptions Base = new()
    {
        Policy = PolicyNames.Adaptive,
        BlendWeight = 2,
        Alpha = 1.5,
        Lapse = 0.05,
        Seed = 77,
        Gate = new GateSettings
        {
            TargetError = 0.1,
            Confidence = 0.8,
            MaxTeachingItems = 40,
            Retakes = 1,
            RequireBeliefAfterTest = true,
            Test = new TestSettings { Mode = TestModes.Sequential, MaxItems = 30, Delta = 0.15, Alpha = 0.05, Beta = 0.1 },
        },
    };

    [Fact]
    public void An_arm_without_overrides_changes_only_the_policy()
    {
        var options = new ArmDefinition { Name = "b", Policy = PolicyNames.Random }.Apply(Base);
        Assert.Equal(Base with { Policy = PolicyNames.Random }, options);
    }

    [Fact]
    public void Given_overrides_replace_and_the_rest_is_kept()
    {
        var arm = new ArmDefinition
        {
            Name = "strict",
            Policy = PolicyNames.Cover,
            LearnerAlpha = 3,
            BlendWeight = 0,
            Gate = new GateOverride { TargetError = 0.05, Retakes = 0, Test = new TestOverride { Mode = TestModes.Fixed, Beta = 0.2 } },
        };
        var options = arm.Apply(Base);
        var expected = Base with
        {
            Policy = PolicyNames.Cover,
            Alpha = 3,
            BlendWeight = 0,
            Gate = Base.Gate with { TargetError = 0.05, Retakes = 0, Test = Base.Gate.Test with { Mode = TestModes.Fixed, Beta = 0.2 } },
        };
        Assert.Equal(expected, options);
        Assert.Equal(77UL, options.Seed);
        Assert.Equal(0.05, options.Lapse);
        Assert.True(options.Gate.RequireBeliefAfterTest);
    }

    [Fact]
    public void Every_gate_field_can_be_overridden()
    {
        var gate = new GateOverride
        {
            TargetError = 0.2,
            Confidence = 0.9,
            MaxTeachingItems = 12,
            Retakes = 3,
            MasteryStreak = 5,
            MasteryExtension = 0,
            Remediation = RemediationModes.Policy,
            TypicalityWeight = 1.5,
            OpeningVariety = 0,
            Test = new TestOverride { Mode = TestModes.Fixed, MaxItems = 8, Delta = 0.1, Alpha = 0.01, Beta = 0.02 },
        };
        var applied = gate.ApplyTo(Base.Gate);
        Assert.Equal((5, 0, RemediationModes.Policy, 1.5, 0), (applied.MasteryStreak, applied.MasteryExtension, applied.Remediation, applied.TypicalityWeight, applied.OpeningVariety));
        Assert.Equal(
            (0.2, 0.9, 12, 3, TestModes.Fixed, 8, 0.1, 0.01, 0.02),
            (applied.TargetError, applied.Confidence, applied.MaxTeachingItems, applied.Retakes, applied.Test.Mode, applied.Test.MaxItems, applied.Test.Delta, applied.Test.Alpha, applied.Test.Beta));
    }
}
