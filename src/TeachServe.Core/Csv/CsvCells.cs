using System.Text;

namespace TeachServe.Core.Csv;

/// <summary>
/// The one way TeachServe writes a CSV cell: formula-neutralised, then quoted as RFC 4180 requires. Every CSV the
/// server or the command-line tool writes goes through <see cref="Cell"/>, so a worker reference or an arm name such
/// as <c>=HYPERLINK("http://…")</c> arrives in a spreadsheet as text, never as a formula.
/// </summary>
/// <remarks>
/// Neutralising follows OWASP's "CSV Injection" page (owasp.org/www-community/attacks/CSV_Injection) and the
/// OWASP ASVS requirement on formula injection: a cell whose first character is <c>=</c>, <c>+</c>, <c>-</c>,
/// <c>@</c>, tab or carriage return gets a single quote in front, which spreadsheets read as "this is text" and
/// do not display. A cell that is a plain decimal number (<c>-0.25</c>, <c>+3</c>, <c>1e-5</c>) is left alone:
/// a spreadsheet reads it as that number and nothing else, and prefixing would turn every negative figure into
/// text (the same exception as the Python package defusedcsv — from memory). Quoting is RFC 4180 section 2.6–2.7:
/// a cell holding a comma, a double quote or a line break is enclosed in double quotes, inner quotes doubled.
/// </remarks>
public static class CsvCells
{
    /// <summary>RFC 4180 line end.</summary>
    public const string LineEnd = "\r\n";

    /// <summary>The cell as it is written between commas: neutralised, then quoted when needed.</summary>
    public static string Cell(string? value) => Quote(Neutralise(value ?? string.Empty));

    /// <summary>Prefixes a single quote to a cell that a spreadsheet would read as a formula.</summary>
    public static string Neutralise(string value)
    {
        ArgumentNullException.ThrowIfNull(value);
        if (value.Length == 0 || !IsFormulaStart(value[0]) || IsPlainNumber(value)) return value;
        return "'" + value;
    }

    /// <summary>Writes one row of cells, each through <see cref="Cell"/>, and the line end.</summary>
    public static void WriteRow(TextWriter writer, IReadOnlyList<string?> cells)
    {
        ArgumentNullException.ThrowIfNull(writer);
        ArgumentNullException.ThrowIfNull(cells);
        for (var i = 0; i < cells.Count; i++)
        {
            if (i > 0) writer.Write(',');
            writer.Write(Cell(cells[i]));
        }
        writer.Write(LineEnd);
    }

    /// <summary>Appends one row of cells, each through <see cref="Cell"/>, and the line end.</summary>
    public static StringBuilder AppendRow(StringBuilder builder, params ReadOnlySpan<string?> cells)
    {
        ArgumentNullException.ThrowIfNull(builder);
        for (var i = 0; i < cells.Length; i++)
        {
            if (i > 0) builder.Append(',');
            builder.Append(Cell(cells[i]));
        }
        return builder.Append(LineEnd);
    }

    private static bool IsFormulaStart(char c) => c is '=' or '+' or '-' or '@' or '\t' or '\r';

    private static string Quote(string cell) =>
        cell.AsSpan().IndexOfAny(",\"\r\n") < 0 ? cell : "\"" + cell.Replace("\"", "\"\"", StringComparison.Ordinal) + "\"";

    /// <summary>Sign, digits with at most one decimal point, optional exponent: what the writers themselves print for numbers.</summary>
    private static bool IsPlainNumber(string value)
    {
        var i = 0;
        if (value[i] is '+' or '-') i++;
        var digits = 0;
        var point = false;
        for (; i < value.Length; i++)
        {
            var c = value[i];
            if (char.IsAsciiDigit(c)) digits++;
            else if (c == '.' && !point) point = true;
            else break;
        }
        if (digits == 0) return false;
        if (i < value.Length && value[i] is 'e' or 'E')
        {
            i++;
            if (i < value.Length && value[i] is '+' or '-') i++;
            var exponentDigits = 0;
            for (; i < value.Length && char.IsAsciiDigit(value[i]); i++) exponentDigits++;
            if (exponentDigits == 0) return false;
        }
        return i == value.Length;
    }
}
