using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Webhooks;

/// <summary>What the dispatcher may do with a delivery to one destination right now.</summary>
public enum Admission
{
    /// <summary>Post it now (a slot was taken; give it back with <see cref="DestinationGates.Exit"/>).</summary>
    Go,
    /// <summary>The destination has its cap of deliveries in flight; leave the row due for later.</summary>
    Busy,
    /// <summary>The destination's circuit is open: reschedule the row to <see cref="DestinationGates.OpenUntil"/> without an attempt.</summary>
    Open,
}

/// <summary>
/// Per destination (scheme, host and port of the webhook URL): a cap on deliveries in flight, and a circuit
/// breaker. After <c>BreakerFailures</c> consecutive failed attempts the circuit opens: nothing is posted there for
/// <c>BreakerCooldown</c>; then it is half-open and lets exactly one trial through, whose success closes it and
/// whose failure opens it for another cool-down (the circuit-breaker pattern; M. Nygard, "Release It!", 2007 —
/// from memory). State is per node and in memory: each node learns a failing destination on its own, and a
/// restart forgets it, which costs at most <c>BreakerFailures</c> more attempts.
/// </summary>
public sealed class DestinationGates(WebhookOptions settings, TimeProvider time)
{
    private sealed class State
    {
        public int InFlight;
        public int ConsecutiveFailures;
        public DateTimeOffset? OpenUntil;
        public bool TrialInFlight;
    }

    private readonly Dictionary<string, State> _states = new(StringComparer.Ordinal);

    /// <summary>The destination a URL's deliveries are counted under.</summary>
    public static string DestinationOf(string url) =>
        Uri.TryCreate(url, UriKind.Absolute, out var uri) ? $"{uri.Scheme}://{uri.IdnHost}:{uri.Port}" : url;

    public Admission TryEnter(string destination)
    {
        lock (_states)
        {
            if (!_states.TryGetValue(destination, out var state)) _states[destination] = state = new State();
            if (state.OpenUntil is { } until)
            {
                if (time.GetUtcNow() < until) return Admission.Open;
                // Half-open: one trial at a time.
                if (state.TrialInFlight || state.InFlight > 0) return Admission.Busy;
                state.TrialInFlight = true;
                state.InFlight++;
                return Admission.Go;
            }
            if (state.InFlight >= settings.MaxConcurrentPerDestination) return Admission.Busy;
            state.InFlight++;
            return Admission.Go;
        }
    }

    /// <summary>When the destination's open circuit lets a trial through (null when it is not open).</summary>
    public DateTimeOffset? OpenUntil(string destination)
    {
        lock (_states) return _states.TryGetValue(destination, out var s) ? s.OpenUntil : null;
    }

    /// <summary>Gives back a slot taken by <see cref="TryEnter"/>; <paramref name="succeeded"/> is null when nothing was posted.</summary>
    public void Exit(string destination, bool? succeeded)
    {
        lock (_states)
        {
            var state = _states[destination];
            state.InFlight--;
            var trial = state.TrialInFlight;
            state.TrialInFlight = false;
            if (succeeded is null) return;
            if (succeeded.Value)
            {
                state.ConsecutiveFailures = 0;
                state.OpenUntil = null;
                return;
            }
            state.ConsecutiveFailures++;
            if (trial || state.ConsecutiveFailures >= settings.BreakerFailures)
                state.OpenUntil = time.GetUtcNow() + settings.BreakerCooldown;
        }
    }
}
