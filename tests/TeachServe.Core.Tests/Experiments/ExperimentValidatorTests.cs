using TeachServe.Core.Experiments;
using TeachServe.Core.Projects;

namespace TeachServe.Core.Tests.Experiments;

public class ExperimentValidatorTests
{
    [Fact]
    public void The_sample_definition_is_valid()
    {
        Assert.Empty(ExperimentValidator.Validate(ExperimentSamples.Definition()));
        Assert.Empty(ExperimentValidator.Validate(ExperimentSamples.Definition(10) with { Weights = [.. Enumerable.Repeat(0.1, 10)] }));
    }

    [Theory]
    [InlineData(1)]
    [InlineData(11)]
    public void Arm_count_must_be_2_to_10(int arms)
    {
        AssertOnly(ExperimentValidator.Validate(ExperimentSamples.Definition(arms)), "arms");
    }

    [Fact]
    public void Arms_must_be_present_and_not_null()
    {
        AssertOnly(ExperimentValidator.Validate(ExperimentSamples.Definition() with { Arms = null! }), "arms");
        var d = ExperimentSamples.Definition(3);
        AssertOnly(ExperimentValidator.Validate(d with { Arms = [d.Arms[0], null!, d.Arms[2]] }), "arms[1]");
    }

    [Fact]
    public void Arm_names_must_be_non_empty_and_unique()
    {
        var d = ExperimentSamples.Definition(3);
        var problem = AssertOnly(ExperimentValidator.Validate(d with { Arms = [d.Arms[0], d.Arms[1], d.Arms[2] with { Name = "arm0" }] }), "arms[2].name");
        Assert.Contains("arms[0]", problem.Message, StringComparison.Ordinal);
        AssertOnly(ExperimentValidator.Validate(d with { Arms = [d.Arms[0], d.Arms[1] with { Name = " " }, d.Arms[2]] }), "arms[1].name");
    }

    [Fact]
    public void Arm_policies_must_be_known()
    {
        var d = ExperimentSamples.Definition();
        var problem = AssertOnly(ExperimentValidator.Validate(d with { Arms = [d.Arms[0], d.Arms[1] with { Policy = "greedy" }] }), "arms[1].policy");
        Assert.Contains("'greedy'", problem.Message, StringComparison.Ordinal);
        foreach (var policy in PolicyNames.All)
            Assert.Empty(ExperimentValidator.Validate(d with { Arms = [d.Arms[0], d.Arms[1] with { Policy = policy }] }));
    }

    [Theory]
    [InlineData(0)]
    [InlineData(-1)]
    [InlineData(double.NaN)]
    [InlineData(double.PositiveInfinity)]
    [InlineData(1e6 * (1 + 1e-12))]
    [InlineData(1e308)]
    public void Weights_must_be_positive_finite_and_at_most_a_million(double weight)
    {
        AssertOnly(ExperimentValidator.Validate(ExperimentSamples.Definition(3) with { Weights = [1, 1, weight] }), "weights[2]");
    }

    [Fact]
    public void Weights_up_to_a_million_are_accepted_and_the_largest_sum_stays_finite()
    {
        Assert.Empty(ExperimentValidator.Validate(ExperimentSamples.Definition(3) with { Weights = [1e6, 1e-9, 1e6] }));
        // Two weights of 1e308 each are finite but sum to infinity: each is refused by name.
        var problems = ExperimentValidator.Validate(ExperimentSamples.Definition(2) with { Weights = [1e308, 1e308] });
        Assert.Equal(["weights[0]", "weights[1]"], problems.Select(p => p.Field));
    }

    [Fact]
    public void One_weight_per_arm()
    {
        AssertOnly(ExperimentValidator.Validate(ExperimentSamples.Definition(3) with { Weights = [1, 1] }), "weights");
    }

    [Theory]
    [InlineData(0)]
    [InlineData(1)]
    [InlineData(-0.1)]
    [InlineData(double.NaN)]
    [InlineData(1e-300)]
    [InlineData(0.000999)]
    [InlineData(double.PositiveInfinity)]
    public void Minimum_detectable_effect_must_be_at_least_a_thousandth_and_below_one(double mde)
    {
        AssertOnly(ExperimentValidator.Validate(ExperimentSamples.Definition() with { MinimumDetectableEffect = mde }), "minimumDetectableEffect");
    }

    [Theory]
    [InlineData(0.001)]
    [InlineData(0.999)]
    public void Minimum_detectable_effect_bounds_are_accepted(double mde)
    {
        Assert.Empty(ExperimentValidator.Validate(ExperimentSamples.Definition() with { MinimumDetectableEffect = mde }));
    }

    [Fact]
    public void Primary_metric_must_be_known()
    {
        AssertOnly(ExperimentValidator.Validate(ExperimentSamples.Definition() with { PrimaryMetric = "accuracy" }), "primaryMetric");
        foreach (var metric in ExperimentMetrics.All)
            Assert.Empty(ExperimentValidator.Validate(ExperimentSamples.Definition() with { PrimaryMetric = metric }));
    }

    [Fact]
    public void Control_arm_must_name_an_arm()
    {
        var d = ExperimentSamples.Definition(3);
        AssertOnly(ExperimentValidator.Validate(d with { ControlArm = "arm9" }), "controlArm");
        Assert.Equal(-1, (d with { ControlArm = "arm9" }).ControlArmIndex());
        Assert.Equal(2, (d with { ControlArm = "arm2" }).ControlArmIndex());
        Assert.Equal(0, d.ControlArmIndex());
    }

    [Theory]
    [InlineData("")]
    [InlineData("a\nb")]
    public void Salt_must_be_non_empty_without_line_breaks(string salt)
    {
        AssertOnly(ExperimentValidator.Validate(ExperimentSamples.Definition() with { Salt = salt }), "salt");
    }

    [Fact]
    public void Name_must_not_be_empty()
    {
        AssertOnly(ExperimentValidator.Validate(ExperimentSamples.Definition() with { Name = "" }), "name");
    }

    // The override ranges are the project validator's (SettingRules): the same values fail here at the arm's path.
    [Theory]
    [InlineData("learnerAlpha", 0)]
    [InlineData("learnerAlpha", double.NaN)]
    [InlineData("learnerAlpha", double.PositiveInfinity)]
    [InlineData("blendWeight", -0.5)]
    [InlineData("blendWeight", double.NaN)]
    [InlineData("gate.targetError", 0)]
    [InlineData("gate.targetError", 1)]
    [InlineData("gate.confidence", 0)]
    [InlineData("gate.confidence", 1)]
    [InlineData("gate.maxTeachingItems", 0)]
    [InlineData("gate.retakes", -1)]
    [InlineData("gate.typicalityWeight", -0.5)]
    [InlineData("gate.typicalityWeight", 10.5)]
    [InlineData("gate.typicalityWeight", double.NaN)]
    [InlineData("gate.openingVariety", -1)]
    [InlineData("gate.openingVariety", 11)]
    [InlineData("gate.test.maxItems", 0)]
    [InlineData("gate.test.delta", 0)]
    [InlineData("gate.test.alpha", 0)]
    [InlineData("gate.test.alpha", 0.5)]
    [InlineData("gate.test.beta", 0)]
    [InlineData("gate.test.beta", 0.5)]
    public void Override_out_of_range_is_reported_at_the_arm_field(string field, double value)
    {
        AssertOnly(ExperimentValidator.Validate(WithOverride(field, value)), $"arms[1].{field}");
    }

    [Theory]
    [InlineData("learnerAlpha", 1e-9)]
    [InlineData("blendWeight", 0)]
    [InlineData("gate.targetError", 0.5)]
    [InlineData("gate.confidence", 0.999)]
    [InlineData("gate.maxTeachingItems", 1)]
    [InlineData("gate.retakes", 0)]
    [InlineData("gate.typicalityWeight", 0)]
    [InlineData("gate.typicalityWeight", 10)]
    [InlineData("gate.openingVariety", 0)]
    [InlineData("gate.openingVariety", 10)]
    [InlineData("gate.test.maxItems", 1)]
    [InlineData("gate.test.delta", 0.3)]
    [InlineData("gate.test.alpha", 0.499)]
    [InlineData("gate.test.beta", 0.001)]
    public void Override_at_the_edge_of_its_range_is_accepted(string field, double value)
    {
        Assert.Empty(ExperimentValidator.Validate(WithOverride(field, value), new GateSettings()));
    }

    [Fact]
    public void Test_mode_override_must_be_sequential_or_fixed()
    {
        var d = ExperimentSamples.Definition();
        var arm = d.Arms[1] with { Gate = new GateOverride { Test = new TestOverride { Mode = "wald" } } };
        AssertOnly(ExperimentValidator.Validate(d with { Arms = [d.Arms[0], arm] }), "arms[1].gate.test.mode");
    }

    [Fact]
    public void Target_plus_delta_is_checked_when_both_are_overridden()
    {
        var d = ExperimentSamples.Definition();
        var arm = d.Arms[1] with { Gate = new GateOverride { TargetError = 0.3, Test = new TestOverride { Delta = 0.7 } } };
        var problem = AssertOnly(ExperimentValidator.Validate(d with { Arms = [d.Arms[0], arm] }), "arms[1].gate.test.delta");
        Assert.Contains("targetError + delta", problem.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Target_plus_delta_uses_the_base_gate_for_the_value_not_overridden()
    {
        var d = ExperimentSamples.Definition();
        var baseGate = new GateSettings { TargetError = 0.1, Test = new TestSettings { Delta = 0.15 } };
        var deltaOnly = d with { Arms = [d.Arms[0], d.Arms[1] with { Gate = new GateOverride { Test = new TestOverride { Delta = 0.9 } } }] };
        var targetOnly = d with { Arms = [d.Arms[0], d.Arms[1] with { Gate = new GateOverride { TargetError = 0.86 } }] };
        AssertOnly(ExperimentValidator.Validate(deltaOnly, baseGate), "arms[1].gate.test.delta");
        AssertOnly(ExperimentValidator.Validate(targetOnly, baseGate), "arms[1].gate.targetError");
        // Without the base gate the sum cannot be formed, so nothing is reported.
        Assert.Empty(ExperimentValidator.Validate(deltaOnly));
        Assert.Empty(ExperimentValidator.Validate(targetOnly));
    }

    [Fact]
    public void Every_problem_is_reported_in_order()
    {
        var d = ExperimentSamples.Definition(3);
        var bad = d with
        {
            Salt = "",
            MinimumDetectableEffect = 2,
            Arms = [d.Arms[0] with { Policy = "x" }, d.Arms[1], d.Arms[2] with { LearnerAlpha = -1 }],
            Weights = [1, 0, 1],
            ControlArm = "nope",
        };
        Assert.Equal(
            ["salt", "minimumDetectableEffect", "arms[0].policy", "arms[2].learnerAlpha", "weights[1]", "controlArm"],
            ExperimentValidator.Validate(bad).Select(p => p.Field));
    }

    private static ExperimentProblem AssertOnly(IReadOnlyList<ExperimentProblem> problems, string field)
    {
        var problem = Assert.Single(problems);
        Assert.Equal(field, problem.Field);
        Assert.False(string.IsNullOrWhiteSpace(problem.Message));
        return problem;
    }

    private static ExperimentDefinition WithOverride(string field, double value)
    {
        var d = ExperimentSamples.Definition();
        var arm = d.Arms[1];
        arm = field switch
        {
            "learnerAlpha" => arm with { LearnerAlpha = value },
            "blendWeight" => arm with { BlendWeight = value },
            "gate.targetError" => arm with { Gate = new GateOverride { TargetError = value } },
            "gate.confidence" => arm with { Gate = new GateOverride { Confidence = value } },
            "gate.maxTeachingItems" => arm with { Gate = new GateOverride { MaxTeachingItems = (int)value } },
            "gate.retakes" => arm with { Gate = new GateOverride { Retakes = (int)value } },
            "gate.typicalityWeight" => arm with { Gate = new GateOverride { TypicalityWeight = value } },
            "gate.openingVariety" => arm with { Gate = new GateOverride { OpeningVariety = (int)value } },
            "gate.test.maxItems" => arm with { Gate = new GateOverride { Test = new TestOverride { MaxItems = (int)value } } },
            "gate.test.delta" => arm with { Gate = new GateOverride { Test = new TestOverride { Delta = value } } },
            "gate.test.alpha" => arm with { Gate = new GateOverride { Test = new TestOverride { Alpha = value } } },
            "gate.test.beta" => arm with { Gate = new GateOverride { Test = new TestOverride { Beta = value } } },
            _ => throw new ArgumentOutOfRangeException(nameof(field), field, null),
        };
        return d with { Arms = [d.Arms[0], arm] };
    }
}
