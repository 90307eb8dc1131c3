using Microsoft.Playwright;

namespace TeachServe.Browser.Tests;

/// <summary>Debian's Chromium driven by Playwright (no browser download); screenshots go to artifacts/screenshots/.</summary>
public static class Browser
{
    public const string ChromiumPath = "/usr/bin/chromium";

    public static readonly string[] LaunchFlags =
        ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update", "--no-first-run"];

    public static async Task<(IPlaywright, IBrowser)> LaunchAsync()
    {
        Assert.True(File.Exists(ChromiumPath), $"{ChromiumPath} is missing: ./test.sh installs it with apt-get (package 'chromium').");
        var playwright = await Playwright.CreateAsync();
        var browser = await playwright.Chromium.LaunchAsync(new BrowserTypeLaunchOptions
        {
            ExecutablePath = ChromiumPath,
            Headless = true,
            Args = LaunchFlags,
        });
        return (playwright, browser);
    }

    public static string ScreenshotDirectory { get; } = FindScreenshotDirectory();

    public static Task ShotAsync(IPage page, string name) =>
        page.ScreenshotAsync(new PageScreenshotOptions { Path = Path.Combine(ScreenshotDirectory, name + ".png"), FullPage = true, Animations = ScreenshotAnimations.Disabled });

    private static string FindScreenshotDirectory()
    {
        for (var dir = new DirectoryInfo(AppContext.BaseDirectory); dir is not null; dir = dir.Parent)
        {
            if (File.Exists(Path.Combine(dir.FullName, "TeachServe.sln")))
                return Directory.CreateDirectory(Path.Combine(dir.FullName, "artifacts", "screenshots")).FullName;
        }
        return Directory.CreateDirectory(Path.Combine(AppContext.BaseDirectory, "screenshots")).FullName;
    }
}
