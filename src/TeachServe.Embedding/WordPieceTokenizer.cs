using System.Globalization;
using System.Text;

namespace TeachServe.Embedding;

/// <summary>
/// BERT's uncased tokenisation as the model was trained with it (Devlin et al. 2019, and the reference
/// <c>BasicTokenizer</c> + <c>WordpieceTokenizer</c> of the original BERT code): clean control characters, put spaces
/// around CJK ideographs, split on whitespace, lower-case, strip accents (NFD, drop non-spacing marks), split off
/// punctuation, then greedy longest-match-first word pieces with <c>##</c> continuations; a word with no split, or
/// longer than 100 characters, becomes <c>[UNK]</c>.
/// </summary>
public sealed class WordPieceTokenizer
{
    private const int MaxWordLength = 100;
    private readonly Dictionary<string, int> _vocabulary;

    public WordPieceTokenizer(IEnumerable<string> vocabulary)
    {
        ArgumentNullException.ThrowIfNull(vocabulary);
        _vocabulary = new Dictionary<string, int>(StringComparer.Ordinal);
        var index = 0;
        foreach (var token in vocabulary) _vocabulary.TryAdd(token, index++);
        Unknown = _vocabulary["[UNK]"];
        Classification = _vocabulary["[CLS]"];
        Separator = _vocabulary["[SEP]"];
    }

    public int Unknown { get; }
    public int Classification { get; }
    public int Separator { get; }

    /// <summary><c>[CLS]</c>, the word pieces (at most <paramref name="maxTokens"/> − 2 of them), <c>[SEP]</c>.</summary>
    public int[] Encode(string text, int maxTokens)
    {
        ArgumentNullException.ThrowIfNull(text);
        var ids = new List<int> { Classification };
        foreach (var word in BasicTokens(text))
        {
            WordPieces(word, ids);
            if (ids.Count >= maxTokens - 1) break;
        }
        if (ids.Count > maxTokens - 1) ids.RemoveRange(maxTokens - 1, ids.Count - (maxTokens - 1));
        ids.Add(Separator);
        return [.. ids];
    }

    /// <summary>The words of BERT's basic tokeniser, before word pieces.</summary>
    public static IEnumerable<string> BasicTokens(string text)
    {
        var cleaned = new StringBuilder(text.Length + 8);
        foreach (var rune in text.EnumerateRunes())
        {
            if (rune.Value is 0 or 0xFFFD || (IsControl(rune) && !IsWhitespace(rune))) continue;
            if (IsWhitespace(rune)) cleaned.Append(' ');
            else if (IsCjk(rune.Value)) cleaned.Append(' ').Append(rune.ToString()).Append(' ');
            else cleaned.Append(rune.ToString());
        }

        foreach (var raw in cleaned.ToString().Split(' ', StringSplitOptions.RemoveEmptyEntries))
        {
            var word = StripAccents(raw.ToLowerInvariant());
            var current = new StringBuilder();
            foreach (var rune in word.EnumerateRunes())
            {
                if (IsPunctuation(rune))
                {
                    if (current.Length > 0) yield return current.ToString();
                    current.Clear();
                    yield return rune.ToString();
                }
                else
                {
                    current.Append(rune.ToString());
                }
            }
            if (current.Length > 0) yield return current.ToString();
        }
    }

    private void WordPieces(string word, List<int> ids)
    {
        if (word.Length > MaxWordLength)
        {
            ids.Add(Unknown);
            return;
        }
        var pieces = new List<int>();
        var start = 0;
        while (start < word.Length)
        {
            var end = word.Length;
            var found = -1;
            while (start < end)
            {
                var piece = start > 0 ? string.Concat("##", word.AsSpan(start, end - start)) : word[start..end];
                if (_vocabulary.TryGetValue(piece, out var id))
                {
                    found = id;
                    break;
                }
                end--;
            }
            if (found < 0)
            {
                ids.Add(Unknown);
                return;
            }
            pieces.Add(found);
            start = end;
        }
        ids.AddRange(pieces);
    }

    /// <summary>NFD without its non-spacing marks, for the Latin blocks (see <see cref="LatinAccents"/>).</summary>
    private static string StripAccents(string word)
    {
        var kept = new StringBuilder(word.Length);
        foreach (var c in word)
        {
            if (CharUnicodeInfo.GetUnicodeCategory(c) != UnicodeCategory.NonSpacingMark) kept.Append(LatinAccents.Strip(c));
        }
        return kept.ToString();
    }

    private static bool IsWhitespace(Rune r) =>
        r.Value is ' ' or '\t' or '\n' or '\r' || Rune.GetUnicodeCategory(r) == UnicodeCategory.SpaceSeparator;

    private static bool IsControl(Rune r) =>
        r.Value is not ('\t' or '\n' or '\r') && Rune.GetUnicodeCategory(r) is UnicodeCategory.Control or UnicodeCategory.Format;

    /// <summary>All non-letter, non-digit ASCII is punctuation to BERT (so <c>$</c> and <c>^</c> split too), plus Unicode P*.</summary>
    private static bool IsPunctuation(Rune r)
    {
        var cp = r.Value;
        if (cp is (>= 33 and <= 47) or (>= 58 and <= 64) or (>= 91 and <= 96) or (>= 123 and <= 126)) return true;
        return Rune.GetUnicodeCategory(r) is UnicodeCategory.ConnectorPunctuation or UnicodeCategory.DashPunctuation
            or UnicodeCategory.OpenPunctuation or UnicodeCategory.ClosePunctuation or UnicodeCategory.InitialQuotePunctuation
            or UnicodeCategory.FinalQuotePunctuation or UnicodeCategory.OtherPunctuation;
    }

    /// <summary>The CJK Unified Ideograph blocks BERT spaces out (its <c>_is_chinese_char</c>).</summary>
    private static bool IsCjk(int cp) =>
        cp is (>= 0x4E00 and <= 0x9FFF) or (>= 0x3400 and <= 0x4DBF) or (>= 0x20000 and <= 0x2A6DF) or (>= 0x2A700 and <= 0x2B73F)
            or (>= 0x2B740 and <= 0x2B81F) or (>= 0x2B820 and <= 0x2CEAF) or (>= 0xF900 and <= 0xFAFF) or (>= 0x2F800 and <= 0x2FA1F);
}
