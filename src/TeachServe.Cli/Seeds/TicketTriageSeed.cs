using System.Text;
using TeachServe.Core.Projects;

namespace TeachServe.Cli.Seeds;

/// <summary>
/// Invented support tickets for the made-up products below, to be triaged <c>escalate</c> or <c>routine</c>.
/// Each ticket is assembled from template sentences for the cues it carries. The reference rule: escalate when the ticket
/// reports an outage, data loss, or is a repeat contact. The enterprise tier, a greeting, billing and password-reset
/// requests are distractors: they appear on both sides and never decide.
/// </summary>
internal static class TicketTriageSeed
{
    public const string Name = "ticket-triage";
    public const int DefaultSeed = 4202;
    public const string Escalate = "escalate";
    public const string Routine = "routine";
    public const int TeachPerLabel = 120;
    public const int TestPerLabel = 50;

    public const string Outage = "mentions_outage";
    public const string DataLoss = "data_loss";
    public const string RepeatContact = "repeat_contact";
    public const string Enterprise = "customer_tier_enterprise";
    public const string Billing = "billing_question";
    public const string PasswordReset = "password_reset";
    public const string Greeting = "polite_greeting";

    public static readonly IReadOnlyList<string> Decisive = [Outage, DataLoss, RepeatContact];

    private static readonly string[] Products = ["Fernquill Vault", "Brindleboard", "Nimbrel Sync", "Tarrowdesk", "Quorrel Notes"];
    private static readonly string[] Teams = ["Harrow Lane office", "Cobble Street studio", "Marrowfield clinic", "Juniper Yard depot", "Oakhollow school"];
    private static readonly string[] Days = ["Monday", "Tuesday", "Wednesday", "Thursday", "Friday"];
    private static readonly string[] Ordinals = ["second", "third", "fourth"];

    internal static string RuleLabel(IReadOnlyList<string> attributes) =>
        attributes.Any(Decisive.Contains) ? Escalate : Routine;

    public static ProjectDefinition Generate(int seed)
    {
        var random = new Random(seed);
        var items = BalancedPools.Draw(random, "ticket", [Escalate, Routine], TeachPerLabel, TestPerLabel, Draw);
        return new ProjectDefinition(Settings(), items);
    }

    public static ProjectSettings Settings() => new()
    {
        Name = "Support ticket triage (teaching demo)",
        Labels = [Escalate, Routine],
        Family = new FamilySettings { Kind = FamilyKinds.Cues, Seed = 1, MaxCues = 3, CandidateCues = 7 },
        Learner = new LearnerSettings { Alpha = 1.5, Lapse = 0.05 },
        Gate = new GateSettings
        {
            TargetError = 0.1,
            // 0.9, not the default 0.8: with varied openings (gate.openingVariety) the adaptive policy released
            // assumed learners with precision 0.945 at 0.8 and 0.978 at 0.9, at 14.3 against 14.8 teaching items
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
        var outage = random.NextDouble() < 0.25;
        var dataLoss = random.NextDouble() < 0.18;
        var repeat = random.NextDouble() < 0.25;
        var urgent = outage || dataLoss || repeat;
        // The enterprise tier is a little more common among urgent tickets, which makes it a tempting but wrong cue.
        var enterprise = random.NextDouble() < (urgent ? 0.4 : 0.25);
        var billing = random.NextDouble() < (outage || dataLoss ? 0.1 : 0.35);
        var password = random.NextDouble() < (outage ? 0.05 : 0.3);
        var greeting = random.NextDouble() < 0.5;

        var attributes = new List<string>();
        void Cue(bool present, string name)
        {
            if (present)
                attributes.Add(name);
        }
        Cue(outage, Outage);
        Cue(dataLoss, DataLoss);
        Cue(repeat, RepeatContact);
        Cue(enterprise, Enterprise);
        Cue(billing, Billing);
        Cue(password, PasswordReset);
        Cue(greeting, Greeting);

        var label = RuleLabel(attributes);
        return new ItemDefinition
        {
            Id = "",
            Pool = "",
            Label = label,
            Attributes = attributes,
            Content = new ItemContent { Text = Ticket(random, outage, dataLoss, repeat, enterprise, billing, password, greeting) },
            Explanation = Explain(outage, dataLoss, repeat, enterprise, billing, password),
        };
    }

    private static string Ticket(Random random, bool outage, bool dataLoss, bool repeat, bool enterprise, bool billing, bool password, bool greeting)
    {
        var product = Pick(random, Products);
        var reference = $"#{random.Next(10000, 99999)}";
        var subject = outage ? Pick(random, [$"{product} is down", $"{product} not loading for anyone", "Everything stopped working"])
            : dataLoss ? Pick(random, ["Files missing after sync", $"Records gone from {product}", "Our saved work disappeared"])
            : password ? Pick(random, ["Cannot sign in", "Password reset email never arrives", "Locked out of my account"])
            : billing ? Pick(random, ["Question about our invoice", "Double charge?", "Invoice higher than expected"])
            : repeat ? Pick(random, ["Still waiting on my earlier request", "Following up again", "No answer yet"])
            : Pick(random, ["Quick question", $"How do I export from {product}?", "Settings question"]);

        var body = new List<string>();
        if (greeting)
            body.Add(Pick(random, ["Hello support team,", "Good morning, I hope you are well.", "Hi there, thank you in advance for your help."]));
        if (enterprise)
            body.Add(Pick(random, [$"We are on the Enterprise plan (contract EN-{random.Next(1000, 9999)}).", $"Our organisation has the Enterprise tier with {random.Next(40, 900)} seats."]));
        if (outage)
            body.Add(Pick(random,
            [
                $"Since about {random.Next(7, 11)}:{random.Next(0, 6)}0 this morning {product} shows a blank page for everyone in our office.",
                $"{product} has been down for our whole team for the last {random.Next(2, 6)} hours; nobody can open a workspace.",
                $"All of our sites report that {product} times out, so our work has stopped.",
            ]));
        if (dataLoss)
            body.Add(Pick(random,
            [
                $"Several records we saved yesterday are gone from {product}, and the history view is empty.",
                $"After last night's sync about {random.Next(12, 300)} documents disappeared from the shared vault.",
                $"A colleague's project folder in {product} is empty now, although nobody deleted anything.",
            ]));
        if (password)
            body.Add(Pick(random,
            [
                "One of my colleagues cannot sign in and needs a password reset link.",
                "I forgot my password and the reset email does not arrive.",
                "Could you reset the password for our shared front-desk account?",
            ]));
        if (billing)
            body.Add((outage || dataLoss || password ? "Separately: " : "") + Pick(random,
            [
                "Our last invoice lists the storage add-on twice.",
                "Could you explain why this month's invoice is higher than the quote?",
                "Can we switch from monthly to yearly billing?",
            ]));
        if (!(outage || dataLoss || password || billing))
            body.Add(Pick(random,
            [
                $"How can I export a weekly report from {product} as a spreadsheet?",
                $"Is there a way to change the colour theme in {product}?",
                $"Where do I find the setting for email notifications in {product}?",
            ]));
        if (repeat)
            body.Add(Pick(random,
            [
                $"This is the {Pick(random, Ordinals)} time I am writing about this; ticket {reference} was closed without a fix.",
                $"I already reported this on {Pick(random, Days)} (case {reference}) and have not heard back.",
            ]));
        var closing = Pick(random, ["Thanks,", "Regards,", "Best wishes,", "Thank you,"]) + " " + Pick(random, Teams);

        var text = new StringBuilder();
        text.Append("Subject: ").Append(subject).Append("\n\n").AppendJoin(' ', body).Append("\n\n").Append(closing);
        return text.ToString();
    }

    private static string Explain(bool outage, bool dataLoss, bool repeat, bool enterprise, bool billing, bool password)
    {
        var reasons = new List<string>();
        if (outage)
            reasons.Add("it reports an outage");
        if (dataLoss)
            reasons.Add("it reports lost data");
        if (repeat)
            reasons.Add("the customer has written about this before");
        if (reasons.Count > 0)
        {
            var because = reasons.Count == 1 ? reasons[0] : string.Join(", ", reasons[..^1]) + " and " + reasons[^1];
            return $"Escalate: {because}.";
        }
        var topic = password ? "a password reset" : billing ? "a billing question" : "a how-to question";
        var note = enterprise ? " The Enterprise tier alone does not make a ticket urgent." : "";
        return $"Routine: no outage, no lost data and a first contact; {topic} goes to the normal queue.{note}";
    }

    private static string Pick(Random random, string[] options) => options[random.Next(options.Length)];

    public static string Readme(int seed) => $"""
        # ticket-triage

        An invented teaching demo: annotators learn to triage support tickets as `escalate` or `routine`.
        The tickets, products ({string.Join(", ", Products)}), places and numbers were all made up by a generator from template sentences.

        - Items: {2 * TeachPerLabel} teach and {2 * TestPerLabel} test, half of each `escalate`, half `routine`.
        - Attributes (cues): `{Outage}`, `{DataLoss}`, `{RepeatContact}` decide (any one of them means escalate);
          `{Enterprise}`, `{Billing}`, `{PasswordReset}` and `{Greeting}` are distractors. Each ticket's text contains a sentence
          for exactly the cues it lists.
        - Hypothesis family: `cues`.

        Generated with `teachserve seed generate {Name} --out seed-projects/{Name} --seed {seed}`.
        """;
}
