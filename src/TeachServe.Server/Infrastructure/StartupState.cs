namespace TeachServe.Server.Infrastructure;

/// <summary>Set once startup work (migrations, keys, demo) has finished; read by <c>/readyz</c>.</summary>
public sealed class StartupState
{
    private volatile bool _ready;
    public bool IsReady => _ready;
    public void MarkReady() => _ready = true;
}
