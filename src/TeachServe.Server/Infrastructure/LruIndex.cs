namespace TeachServe.Server.Infrastructure;

/// <summary>
/// A map with a fixed capacity that drops its least recently used entry when full (common practice: a hash map
/// over a doubly linked list, every operation O(1)). Thread-safe through one lock; the work under it is a few
/// pointer moves, far below the cost of what the caches keep.
/// </summary>
public sealed class LruIndex<TKey, TValue>(int capacity, IEqualityComparer<TKey>? comparer = null) where TKey : notnull
{
    private readonly Dictionary<TKey, LinkedListNode<(TKey Key, TValue Value)>> _map = new(comparer);
    private readonly LinkedList<(TKey Key, TValue Value)> _order = new();
    private readonly Lock _lock = new();

    public int Capacity { get; } = capacity > 0 ? capacity : throw new ArgumentOutOfRangeException(nameof(capacity));

    public int Count
    {
        get
        {
            lock (_lock) return _map.Count;
        }
    }

    public bool TryGet(TKey key, out TValue value)
    {
        lock (_lock)
        {
            if (_map.TryGetValue(key, out var node))
            {
                _order.Remove(node);
                _order.AddFirst(node);
                value = node.Value.Value;
                return true;
            }
        }
        value = default!;
        return false;
    }

    /// <summary>Reads without counting as a use (for checks that must not keep an entry alive).</summary>
    public bool TryPeek(TKey key, out TValue value)
    {
        lock (_lock)
        {
            if (_map.TryGetValue(key, out var node))
            {
                value = node.Value.Value;
                return true;
            }
        }
        value = default!;
        return false;
    }

    /// <summary>The entry for <paramref name="key"/>, added by <paramref name="create"/> (under the lock, so keep it cheap) when missing.</summary>
    public TValue GetOrAdd(TKey key, Func<TKey, TValue> create)
    {
        lock (_lock)
        {
            if (_map.TryGetValue(key, out var node))
            {
                _order.Remove(node);
                _order.AddFirst(node);
                return node.Value.Value;
            }
            var value = create(key);
            AddFirst(key, value);
            return value;
        }
    }

    public void Set(TKey key, TValue value)
    {
        lock (_lock)
        {
            if (_map.Remove(key, out var old)) _order.Remove(old);
            AddFirst(key, value);
        }
    }

    public bool Remove(TKey key)
    {
        lock (_lock)
        {
            if (!_map.Remove(key, out var node)) return false;
            _order.Remove(node);
            return true;
        }
    }

    /// <summary>Removes the entry only if it still holds <paramref name="value"/> (a newer one is kept).</summary>
    public bool Remove(TKey key, TValue value)
    {
        lock (_lock)
        {
            if (!_map.TryGetValue(key, out var node) || !EqualityComparer<TValue>.Default.Equals(node.Value.Value, value)) return false;
            _map.Remove(key);
            _order.Remove(node);
            return true;
        }
    }

    private void AddFirst(TKey key, TValue value)
    {
        _map[key] = _order.AddFirst((key, value));
        while (_map.Count > Capacity)
        {
            var last = _order.Last!;
            _order.RemoveLast();
            _map.Remove(last.Value.Key);
        }
    }
}
