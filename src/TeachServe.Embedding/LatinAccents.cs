namespace TeachServe.Embedding;

/// <summary>
/// BERT uncased strips accents by NFD decomposition and dropping non-spacing marks. The server runs with invariant
/// globalization (no ICU), where <c>string.Normalize</c> does not decompose, so the decompositions of the Latin
/// blocks are tabled here: Latin-1 Supplement to Latin Extended-B (U+00C0–U+024F) and Latin Extended Additional
/// (U+1E00–U+1EFF). Each entry is the code point's NFD with its marks removed, or '.' where that is not a single
/// other letter; the tables were generated with Python's <c>unicodedata.normalize("NFD", …)</c> (Unicode Character
/// Database), an implementation independent of .NET's. Separate combining marks are dropped by category.
/// </summary>
internal static class LatinAccents
{
    private const int FirstBlockStart = 0xC0;
    private const int SecondBlockStart = 0x1E00;

    private const string FirstBlock =
        "AAAAAA.CEEEEIIII.NOOOOO..UUUUY..aaaaaa.ceeeeiiii.nooooo..uuuuy.yAaAaAaCcCcCcCcDd"
        + "..EeEeEeEeEeGgGgGgGgHh..IiIiIiIiI...JjKk.LlLlLl....NnNnNn...OoOoOo..RrRrRrSsSsSs"
        + "SsTtTt..UuUuUuUuUuUuWwYyYZzZzZz.................................Oo.............U"
        + "u............................AaIiOoUuUuUuUuUu.AaAaÆæ..GgKkOoOoƷʒj...Gg..NnAaÆæØø"
        + "AaAaEeEeIiIiOoOoRrRrUuUuSsTt..Hh......AaEeOoOoOoOoYy............................";

    private const string SecondBlock =
        "AaBbBbBbCcDdDdDdDdDdEeEeEeEeEeFfGgHhHhHhHhHhIiIiKkKkKkLlLlLlLlMmMmMmNnNnNnNnOoOo"
        + "OoOoPpPpRrRrRrRrSsSsSsSsSsTtTtTtTtUuUuUuUuUuVvVvWwWwWwWwWwXxXxYyZzZzZzhtwy.ſ...."
        + "AaAaAaAaAaAaAaAaAaAaAaAaEeEeEeEeEeEeEeEeIiIiOoOoOoOoOoOoOoOoOoOoOoOoUuUuUuUuUuUu"
        + "UuYyYyYyYy......";

    /// <summary>The letter without its accents, or the character itself.</summary>
    public static char Strip(char c)
    {
        int offset = c - FirstBlockStart, second = c - SecondBlockStart;
        var mapped = (uint)offset < FirstBlock.Length ? FirstBlock[offset]
            : (uint)second < SecondBlock.Length ? SecondBlock[second]
            : '.';
        return mapped == '.' ? c : mapped;
    }
}
