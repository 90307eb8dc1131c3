namespace TeachServe.Cli.Seeds;

internal static class SeedCatalog
{
    public static IReadOnlyList<SeedProject> All { get; } =
    [
        new(WeldSeamsSeed.Name, WeldSeamsSeed.DefaultSeed,
            "accept/reject weld seams from SVG drawings; numeric features, linear family",
            WeldSeamsSeed.Generate, WeldSeamsSeed.Readme),
        new(TicketTriageSeed.Name, TicketTriageSeed.DefaultSeed,
            "escalate/routine support tickets from text; attribute cues, cues family",
            TicketTriageSeed.Generate, TicketTriageSeed.Readme),
        new(LeafSymptomsSeed.Name, LeafSymptomsSeed.DefaultSeed,
            "three leaf conditions from SVG drawings; numeric features, stumps family",
            LeafSymptomsSeed.Generate, LeafSymptomsSeed.Readme),
        new(KitchenStepsSeed.Name, KitchenStepsSeed.DefaultSeed,
            "recipe steps sorted by station (prep, heat, finish) from their text alone; text family",
            KitchenStepsSeed.Generate, KitchenStepsSeed.Readme),
    ];

    public static SeedProject? Find(string name) => All.FirstOrDefault(s => s.Name == name);
}
