namespace TeachServe.Server.Webhooks;

/// <summary>Wakes the dispatcher when a transaction has committed new outbox rows, so delivery does not wait for the poll.</summary>
public sealed class OutboxSignal
{
    private TaskCompletionSource _signal = New();

    public void Notify() => Volatile.Read(ref _signal).TrySetResult();

    /// <summary>Returns when notified or after <paramref name="timeout"/> on <paramref name="time"/>'s clock.</summary>
    /// <param name="waiting">Called once the timer is armed, so an observer may move a fake clock safely.</param>
    public async Task WaitAsync(TimeSpan timeout, TimeProvider time, Action? waiting, CancellationToken ct)
    {
        var signal = Volatile.Read(ref _signal);
        using var stop = CancellationTokenSource.CreateLinkedTokenSource(ct);
        var delay = Task.Delay(timeout, time, stop.Token);
        waiting?.Invoke();
        await Task.WhenAny(signal.Task, delay);
        await stop.CancelAsync();
        if (signal.Task.IsCompleted) Interlocked.CompareExchange(ref _signal, New(), signal);
        ct.ThrowIfCancellationRequested();
    }

    private static TaskCompletionSource New() => new(TaskCreationOptions.RunContinuationsAsynchronously);
}
