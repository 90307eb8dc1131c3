using System.Text;

namespace TeachServe.Server.Infrastructure;

/// <summary>What the server prints once it is ready: keys shown once, and how to try the demo.</summary>
public sealed class StartupBanner(TextWriter output)
{
    private readonly List<(string Name, string Value)> _lines = [];

    public IReadOnlyList<(string Name, string Value)> Lines => _lines;

    public void Add(string name, string value) => _lines.Add((name, value));

    public void Print()
    {
        var text = new StringBuilder();
        text.AppendLine().AppendLine("TeachServe is ready.");
        var width = _lines.Count == 0 ? 0 : _lines.Max(l => l.Name.Length);
        foreach (var (name, value) in _lines)
            text.Append("  ").Append(name.PadRight(width)).Append("  ").AppendLine(value);
        output.Write(text.ToString());
        output.Flush();
    }
}
