using System.Threading.Channels;

namespace TeachServe.Server.Infrastructure;

/// <summary>
/// A single writer with group commit: requests put their work on a bounded channel and wait; one loop, on a thread of
/// its own (so a group never waits in the thread pool's queue behind request work), takes every piece of work that is
/// waiting, up to what <see cref="Fits"/> allows, and hands the group to <see cref="WriteGroup"/>, which completes
/// each piece. At stop the work already queued is written before the thread ends; work still queued when the loop is
/// cancelled fails with <see cref="OperationCanceledException"/>.
/// </summary>
public abstract class SingleWriter<TWork> : IHostedService, IDisposable
{
    private readonly Channel<TWork> _queue;
    private readonly string _threadName;
    private readonly int _maxGroup;
    private Thread? _thread;
    private int _disposed;

    protected SingleWriter(string threadName, int maxGroup, int capacity)
    {
        _threadName = threadName;
        _maxGroup = maxGroup;
        _queue = Channel.CreateBounded<TWork>(new BoundedChannelOptions(capacity) { SingleReader = true, FullMode = BoundedChannelFullMode.Wait });
    }

    /// <summary>Cancelled when the writer is disposed: a group in flight stops waiting for the database.</summary>
    protected CancellationTokenSource Stopping { get; } = new();

    /// <summary>Queues the work; the caller then waits on the work's own completion.</summary>
    protected ValueTask EnqueueAsync(TWork work, CancellationToken ct) => _queue.Writer.WriteAsync(work, ct);

    /// <summary>Whether <paramref name="candidate"/> may join <paramref name="group"/> (the group holds fewer than the maximum).</summary>
    protected virtual bool Fits(List<TWork> group, TWork candidate) => true;

    /// <summary>Writes a group and completes every piece of it (with a result or an exception); never throws.</summary>
    protected abstract void WriteGroup(List<TWork> group);

    /// <summary>Completes a piece that will never be written (the server is stopping).</summary>
    protected abstract void Abandon(TWork work, Exception reason);

    /// <summary>Runs on the writer's thread when its loop ends, before the queue is drained.</summary>
    protected virtual void OnStopped()
    {
    }

    public Task StartAsync(CancellationToken cancellationToken)
    {
        _thread = new Thread(Run) { IsBackground = true, Name = _threadName };
        _thread.Start();
        return Task.CompletedTask;
    }

    public Task StopAsync(CancellationToken cancellationToken)
    {
        _queue.Writer.TryComplete();
        // The work already queued is written before the thread ends (bounded by the host's stop timeout).
        return Task.Run(() => _thread?.Join(), cancellationToken);
    }

    /// <summary>Stops a writer still waiting for work (it may be registered twice, as itself and as a hosted service).</summary>
    public void Dispose()
    {
        if (Interlocked.Exchange(ref _disposed, 1) != 0) return;
        Stopping.Cancel();
        Stopping.Dispose();
        GC.SuppressFinalize(this);
    }

    private void Run()
    {
        var group = new List<TWork>(_maxGroup);
        try
        {
            while (_queue.Reader.WaitToReadAsync(Stopping.Token).AsTask().GetAwaiter().GetResult())
            {
                group.Clear();
                while (group.Count < _maxGroup && _queue.Reader.TryPeek(out var waiting) && (group.Count == 0 || Fits(group, waiting))
                       && _queue.Reader.TryRead(out waiting))
                    group.Add(waiting);
                WriteGroup(group);
            }
        }
        catch (OperationCanceledException)
        {
        }
        finally
        {
            OnStopped();
            _queue.Writer.TryComplete();
            while (_queue.Reader.TryRead(out var left)) Abandon(left, new OperationCanceledException("The server is stopping."));
        }
    }
}
