using System.Text.Json;
using Microsoft.Playwright;
using TeachServe.Server.Annotate;

namespace TeachServe.Browser.Tests;

/// <summary>
/// Plays an annotator on the page who knows the truth: it recognises the shown drawing (the sanitised SVG of a
/// seed project's item) and answers its true label, or a wrong one when asked to. Waits on the page's own
/// <c>data-view</c>/<c>data-step</c> markers, never on time.
/// </summary>
public sealed class Annotator(IPage page, IFrame frame)
{
    public IPage Page { get; } = page;
    public IFrame Frame { get; } = frame;
    public (string View, int Step) Screen { get; private set; } = ("", -1);

    private static readonly Lazy<Dictionary<string, string>> Truth = new(LoadTruth);

    /// <summary>Waits for the next screen: a view or step different from the last one seen.</summary>
    public async Task<(string View, int Step)> NextScreenAsync()
    {
        var handle = await Frame.WaitForFunctionAsync(
            """
            ([view, step]) => {
              const b = document.body;
              if (!b.dataset.view) return null;
              return b.dataset.view !== view || b.dataset.step !== step ? [b.dataset.view, b.dataset.step] : null;
            }
            """,
            new object[] { Screen.View, Screen.Step.ToString(System.Globalization.CultureInfo.InvariantCulture) },
            new FrameWaitForFunctionOptions { Timeout = 15_000 });
        var pair = await handle.JsonValueAsync<string[]>();
        Screen = (pair[0], int.TryParse(pair[1], out var s) ? s : -1);
        return Screen;
    }

    /// <summary>The owner's instructions were shown before the first item (and passed by <see cref="OpenAsync"/>).</summary>
    public bool SawInstructions { get; private set; }

    /// <summary>Waits for the first screen; if it is the owner's instructions, reads past them to the first item.</summary>
    public async Task<(string View, int Step)> OpenAsync()
    {
        await NextScreenAsync();
        if (Screen.View != "guide") return Screen;
        SawInstructions = true;
        await ContinueAsync(keyboard: false);
        return Screen;
    }

    /// <summary>Re-reads the current screen without waiting for a change (after a reload).</summary>
    public async Task<(string View, int Step)> CurrentScreenAsync()
    {
        Screen = ("", -1);
        return await NextScreenAsync();
    }

    /// <summary>For text items: the true label of each text; when set, the annotator reads the shown text instead of a drawing.</summary>
    public IReadOnlyDictionary<string, string>? TextTruth { get; init; }

    public async Task<string> TrueLabelAsync()
    {
        if (TextTruth is not null)
        {
            var text = await Frame.Locator("#item-figure p.text").InnerTextAsync();
            Assert.True(TextTruth.TryGetValue(text, out var textLabel), $"the shown text is not one of the project's items: {text}");
            return textLabel!;
        }
        var src = await Frame.Locator("#item-figure img").GetAttributeAsync("src");
        Assert.NotNull(src);
        Assert.True(Truth.Value.TryGetValue(src, out var label), "the shown drawing is not one of the demo's items");
        return label;
    }

    public async Task<IReadOnlyList<string>> LabelsAsync() =>
        await Frame.Locator("#label-buttons button").EvaluateAllAsync<string[]>("bs => bs.map(b => b.dataset.label)");

    /// <summary>Answers the item on screen, by mouse or by its number key.</summary>
    public async Task AnswerAsync(bool keyboard, bool correct = true)
    {
        Assert.Equal("item", Screen.View);
        var truth = await TrueLabelAsync();
        var labels = await LabelsAsync();
        var label = correct ? truth : labels.First(l => l != truth);
        if (keyboard) await Page.Keyboard.PressAsync((labels.ToList().IndexOf(label) + 1).ToString(System.Globalization.CultureInfo.InvariantCulture));
        else await Frame.Locator($"#label-buttons button[data-label='{label}']").ClickAsync();
        await NextScreenAsync();
    }

    /// <summary>Leaves a feedback, notice or instructions screen.</summary>
    public async Task ContinueAsync(bool keyboard)
    {
        if (keyboard) await Page.Keyboard.PressAsync("Enter");
        else await Frame.Locator(Screen.View switch { "feedback" => "#next-button", "guide" => "#guide-close", _ => "#notice-button" }).ClickAsync();
        await NextScreenAsync();
    }

    /// <summary>Plays until the end screen; <paramref name="onScreen"/> sees every screen first (for screenshots and reloads).</summary>
    public async Task RunToEndAsync(bool keyboard, Func<(string View, int Step), Task>? onScreen = null, int maxScreens = 400)
    {
        if (Screen.View == "") await NextScreenAsync();
        for (var i = 0; i < maxScreens; i++)
        {
            if (onScreen is not null) await onScreen(Screen);
            switch (Screen.View)
            {
                case "end": return;
                case "item": await AnswerAsync(keyboard); break;
                case "feedback" or "notice" or "guide": await ContinueAsync(keyboard); break;
                default: Assert.Fail($"unexpected screen {Screen.View}: {await Frame.Locator("main").InnerTextAsync()}"); break;
            }
        }
        Assert.Fail("the session did not end");
    }

    public static string RepositoryFile(params string[] parts)
    {
        for (var dir = new DirectoryInfo(AppContext.BaseDirectory); dir is not null; dir = dir.Parent)
        {
            if (File.Exists(Path.Combine(dir.FullName, "TeachServe.sln"))) return Path.Combine([dir.FullName, .. parts]);
        }
        throw new FileNotFoundException(string.Join('/', parts));
    }

    private static Dictionary<string, string> LoadTruth()
    {
        var truth = new Dictionary<string, string>(StringComparer.Ordinal);
        foreach (var line in Directory.GetDirectories(RepositoryFile("seed-projects"))
                     .Select(d => Path.Combine(d, "items.jsonl")).Where(File.Exists).SelectMany(File.ReadLines))
        {
            if (string.IsNullOrWhiteSpace(line)) continue;
            using var doc = JsonDocument.Parse(line);
            if (!doc.RootElement.TryGetProperty("content", out var content) || !content.TryGetProperty("svg", out var drawing)) continue;
            var svg = drawing.GetString()!;
            truth[SvgSanitizer.DataUri(svg)!] = doc.RootElement.GetProperty("label").GetString()!;
        }
        return truth;
    }
}
