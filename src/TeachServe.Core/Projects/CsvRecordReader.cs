using System.Text;

namespace TeachServe.Core.Projects;

/// <summary>One CSV record: its cells, the line it starts on, and what was malformed in it, if anything.</summary>
internal sealed record CsvRecord(int Line, IReadOnlyList<string> Cells, string? Error)
{
    public bool IsBlank => Cells.All(c => c.Length == 0);
}

/// <summary>
/// Splits RFC 4180 CSV into records: comma separators, double-quoted cells with <c>""</c> as an escaped quote,
/// line breaks (LF, CRLF or CR) allowed inside quoted cells. Tracks physical lines so a problem can name where its record starts.
/// </summary>
internal sealed class CsvRecordReader(TextReader reader)
{
    private int _line = 1;
    private bool _started;

    /// <returns>The next record, or <see langword="null"/> at the end of the input.</returns>
    public CsvRecord? Read()
    {
        if (!_started)
        {
            _started = true;
            if (reader.Peek() == '\uFEFF')
                reader.Read();
        }
        if (reader.Peek() < 0)
            return null;

        var startLine = _line;
        var cells = new List<string>();
        var cell = new StringBuilder();
        string? error = null;
        var quoted = false;
        var afterQuote = false;
        while (true)
        {
            var c = reader.Read();
            if (c < 0)
            {
                if (quoted)
                    error ??= "a quoted cell is not closed before the end of the input";
                break;
            }
            if (quoted)
            {
                if (c == '"')
                {
                    if (reader.Peek() == '"')
                    {
                        reader.Read();
                        cell.Append('"');
                    }
                    else
                    {
                        quoted = false;
                        afterQuote = true;
                    }
                }
                else
                {
                    if (c == '\n' || (c == '\r' && reader.Peek() != '\n'))
                        _line++;
                    cell.Append((char)c);
                }
                continue;
            }
            if (c == ',')
            {
                cells.Add(cell.ToString());
                cell.Clear();
                afterQuote = false;
                continue;
            }
            if (c is '\n' or '\r')
            {
                if (c == '\r' && reader.Peek() == '\n')
                    reader.Read();
                _line++;
                break;
            }
            if (c == '"' && cell.Length == 0 && !afterQuote)
            {
                quoted = true;
                continue;
            }
            if (afterQuote)
                error ??= $"unexpected '{(char)c}' after a closing quote";
            cell.Append((char)c);
        }
        cells.Add(cell.ToString());
        return new CsvRecord(startLine, cells, error);
    }
}
