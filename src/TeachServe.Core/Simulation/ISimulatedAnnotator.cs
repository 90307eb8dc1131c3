namespace TeachServe.Core.Simulation;

/// <summary>A simulated annotator as the simulator drives it: it answers items and sees the true label of teaching items.</summary>
public interface ISimulatedAnnotator
{
    /// <summary>The label it gives item <paramref name="item"/> (model index), lapses included.</summary>
    int Answer(int item);

    /// <summary>It sees the true label of teaching item <paramref name="item"/>.</summary>
    void SeeFeedback(int item);

    /// <summary>
    /// The error of the way it labels now, lapses left out: the share of the model version's items (teach and test)
    /// its current rule gets wrong, or for a learner that answers with probabilities, its expected share.
    /// </summary>
    double TrueError { get; }
}
