namespace TeachServe.Core.LiveQuality;

/// <summary>
/// One live-check outcome as the engine sees it: the label given and the known answer, and where the item is one of the
/// model version's items its index (a gold item uploaded on the fly has none: only the count-based views use it).
/// </summary>
/// <param name="Item">Index into the model version's items, or null for an item outside the model.</param>
/// <param name="Label">The label the annotator gave (index into the project's labels).</param>
/// <param name="TrueLabel">The item's known label.</param>
/// <param name="ElapsedDays">Days since the annotator's previous live check (or release), for time-based forgetting; ≥ 0.</param>
public readonly record struct LiveCheck(int? Item, int Label, int TrueLabel, double ElapsedDays = 0)
{
    /// <summary>The error both views count: the label given is not the known label (lapses included).</summary>
    public bool Wrong => Label != TrueLabel;
}
