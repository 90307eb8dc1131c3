using Microsoft.Playwright;

namespace TeachServe.Browser.Tests;

public sealed class AnnotatorPageTests(ServerFixture fixture) : IClassFixture<ServerFixture>
{
    [Fact]
    public async Task The_demo_link_from_start_up_teaches_to_release_by_mouse_and_the_console_then_shows_the_release_and_its_pictures()
    {
        var page = await fixture.NewPageAsync();
        var link = fixture.Server.BannerLine("Annotator link");
        Assert.Contains("#code=", link, StringComparison.Ordinal);
        Assert.DoesNotContain("tst.", link, StringComparison.Ordinal);
        await page.GotoAsync(link);
        var annotator = new Annotator(page, page.MainFrame);
        await annotator.OpenAsync();
        Assert.DoesNotContain("code=", page.Url, StringComparison.Ordinal);
        // The demo's owner wrote instructions: they came first.
        Assert.True(annotator.SawInstructions);

        // The first answer is wrong on purpose, to see the feedback for a mistake.
        await Browser.ShotAsync(page, "annotate-01-teaching-item");
        await annotator.AnswerAsync(keyboard: false, correct: false);
        Assert.Equal("feedback", annotator.Screen.View);
        Assert.Contains("Not quite", await page.Locator("#verdict").InnerTextAsync(), StringComparison.Ordinal);
        Assert.Equal("next-button", await page.EvaluateAsync<string>("document.activeElement.id"));
        await Browser.ShotAsync(page, "annotate-02-feedback-wrong");

        var shots = new HashSet<string>();
        await annotator.RunToEndAsync(keyboard: false, async screen =>
        {
            var phase = await page.Locator("#meter").GetAttributeAsync("data-phase");
            var name = (screen.View, phase) switch
            {
                ("feedback", _) when await page.Locator("#feedback").GetAttributeAsync("data-correct") == "yes" => "annotate-03-feedback-right",
                ("notice", _) => "annotate-04-test-announcement",
                ("item", "testing") => "annotate-05-test-item",
                ("end", _) => "annotate-06-released",
                _ => null,
            };
            if (name is not null && shots.Add(name)) await Browser.ShotAsync(page, name);
        });
        Assert.Contains("annotate-04-test-announcement", shots);
        Assert.Equal("You are released for live work.", await page.Locator("#end-heading").InnerTextAsync());

        // The owner opens the console and finds the release, with the pictures drawn from it.
        var console = await fixture.NewPageAsync(1280, 900);
        await console.GotoAsync(fixture.Server.BaseUrl + "/console");
        await Browser.ShotAsync(console, "console-01-sign-in");
        await console.GetByLabel("Owner key").FillAsync(fixture.OwnerKey);
        await console.GetByRole(AriaRole.Button, new() { Name = "Sign in" }).ClickAsync();
        await console.GetByRole(AriaRole.Heading, new() { Name = "Onboarding" }).WaitForAsync();
        var row = console.Locator("table.sessions tbody tr", new() { HasText = "demo-annotator" });
        Assert.Contains("released", await row.InnerTextAsync(), StringComparison.Ordinal);
        Assert.Contains("Caution", await console.Locator("aside.caution").InnerTextAsync(), StringComparison.Ordinal);
        foreach (var plot in new[] { "calibration", "learning-curve", "items-to-release" })
        {
            var img = console.Locator($"img[src='/console/plots/{plot}.svg']");
            await img.ScrollIntoViewIfNeededAsync();
            await console.WaitForFunctionAsync("i => i.complete && i.naturalWidth > 0", await img.ElementHandleAsync());
        }
        await Browser.ShotAsync(console, "console-02-onboarding");
        var cookies = await console.Context.CookiesAsync();
        var cookie = cookies.Single(c => c.Name == "teachserve-console");
        Assert.True(cookie.HttpOnly && cookie.Secure);
        Assert.Equal(SameSiteAttribute.Strict, cookie.SameSite);

        await console.GetByRole(AriaRole.Link, new() { Name = "Project and items" }).ClickAsync();
        await console.GetByRole(AriaRole.Heading, new() { Name = "Model versions" }).WaitForAsync();
        await Browser.ShotAsync(console, "console-03-project");
    }

    [Fact]
    public async Task An_annotator_using_only_the_keyboard_at_360_px_reaches_release()
    {
        var (_, link) = await fixture.StartSessionAsync("keyboard-annotator");
        var page = await fixture.NewPageAsync(360, 740);
        await page.GotoAsync(link);
        var annotator = new Annotator(page, page.MainFrame);
        await annotator.OpenAsync();
        // Nothing is wider than the screen.
        Assert.True(await page.EvaluateAsync<bool>("document.documentElement.scrollWidth <= window.innerWidth"));
        await Browser.ShotAsync(page, "annotate-360-01-item");
        var shots = new HashSet<string>();
        await annotator.RunToEndAsync(keyboard: true, async screen =>
        {
            if (screen.View == "feedback")
            {
                Assert.Equal("next-button", await page.EvaluateAsync<string>("document.activeElement.id"));
                if (shots.Add("feedback")) await Browser.ShotAsync(page, "annotate-360-02-feedback");
            }
            if (screen.View == "end") await Browser.ShotAsync(page, "annotate-360-03-end");
        });
        Assert.Equal("end", annotator.Screen.View);
        Assert.Equal("released", await page.Locator("#view-end").GetAttributeAsync("data-phase"));
    }

    [Fact]
    public async Task Reloading_in_teaching_and_in_testing_resumes_the_same_step_without_answering_twice()
    {
        var (sessionId, link) = await fixture.StartSessionAsync("reloading-annotator");
        var page = await fixture.NewPageAsync();
        await page.GotoAsync(link);
        var annotator = new Annotator(page, page.MainFrame);
        await annotator.OpenAsync();
        await annotator.AnswerAsync(keyboard: false);
        await annotator.ContinueAsync(keyboard: false);
        await annotator.AnswerAsync(keyboard: false);

        // Reload on the feedback screen: the same feedback comes back.
        var feedbackStep = annotator.Screen.Step;
        var verdict = await page.Locator("#verdict").InnerTextAsync();
        await page.ReloadAsync();
        Assert.Equal(("feedback", feedbackStep), await annotator.CurrentScreenAsync());
        Assert.Equal(verdict, await page.Locator("#verdict").InnerTextAsync());
        await annotator.ContinueAsync(keyboard: false);

        // Reload on a teaching item: the same item at the same step.
        var before = (annotator.Screen, await page.Locator("#item-figure img").GetAttributeAsync("src"));
        await page.ReloadAsync();
        Assert.Equal(before, (await annotator.CurrentScreenAsync(), await page.Locator("#item-figure img").GetAttributeAsync("src")));

        // On to the test, then reload on its second item.
        var reloadedInTest = false;
        await annotator.RunToEndAsync(keyboard: false, async screen =>
        {
            if (reloadedInTest || screen.View != "item" || await page.Locator("#meter").GetAttributeAsync("data-phase") != "testing") return;
            if (await page.Locator("#progress-phase").InnerTextAsync() != "Check · item 2") return;
            reloadedInTest = true;
            var src = await page.Locator("#item-figure img").GetAttributeAsync("src");
            await page.ReloadAsync();
            Assert.Equal(screen, await annotator.CurrentScreenAsync());
            Assert.Equal(src, await page.Locator("#item-figure img").GetAttributeAsync("src"));
            Assert.Equal("Check · item 2", await page.Locator("#progress-phase").InnerTextAsync());
        });
        Assert.True(reloadedInTest);
        var (step, answers, phase) = await fixture.AnswersAsync(sessionId);
        Assert.Equal("released", phase);
        Assert.Equal(step, answers);
    }

    [Fact]
    public async Task A_dropped_connection_is_retried_with_the_same_answer_which_is_stored_once()
    {
        var (sessionId, link) = await fixture.StartSessionAsync("flaky-network-annotator");
        var page = await fixture.NewPageAsync();
        await page.GotoAsync(link);
        var annotator = new Annotator(page, page.MainFrame);
        await annotator.OpenAsync();

        // The server stores the answer, but the response never reaches the page: it must resend, not answer again.
        var lost = 0;
        await page.RouteAsync("**/api/v1/sessions/*/answers", async route =>
        {
            if (Interlocked.Increment(ref lost) == 1)
            {
                await route.FetchAsync();
                await route.AbortAsync("connectionreset");
            }
            else
            {
                await route.ContinueAsync();
            }
        });
        await annotator.AnswerAsync(keyboard: false);
        Assert.Equal("feedback", annotator.Screen.View);
        Assert.True(lost >= 2);
        await page.UnrouteAllAsync();
        await annotator.ContinueAsync(keyboard: false);

        // Fully offline: the page says so, keeps the answer, and sends it when the network is back.
        await page.Context.SetOfflineAsync(true);
        var truth = await annotator.TrueLabelAsync();
        await page.Locator($"#label-buttons button[data-label='{truth}']").ClickAsync();
        await page.Locator("#connection").WaitForAsync(new() { State = WaitForSelectorState.Visible });
        await Browser.ShotAsync(page, "annotate-07-connection-lost");
        await page.Context.SetOfflineAsync(false);
        await annotator.NextScreenAsync();
        Assert.Equal("feedback", annotator.Screen.View);
        await page.Locator("#connection").WaitForAsync(new() { State = WaitForSelectorState.Hidden });

        var (step, answers, _) = await fixture.AnswersAsync(sessionId);
        Assert.Equal(2, step);
        Assert.Equal(2, answers);
    }

    [Fact]
    public async Task A_used_launch_link_in_a_new_tab_explains_itself()
    {
        var (_, link) = await fixture.StartSessionAsync("two-tabs-annotator");
        var first = await fixture.NewPageAsync();
        await first.GotoAsync(link);
        await new Annotator(first, first.MainFrame).OpenAsync();
        var second = await fixture.NewPageAsync();
        await second.GotoAsync(link);
        Assert.Equal("problem", (await new Annotator(second, second.MainFrame).NextScreenAsync()).View);
        Assert.Equal("This link has already been used.", await second.Locator("#problem-heading").InnerTextAsync());
        // Nothing to retry: the only way on is a new link, which the text says.
        Assert.False(await second.Locator("#problem-button").IsVisibleAsync());
        await Browser.ShotAsync(second, "annotate-08-link-used");
    }

    [Fact]
    public async Task On_a_touch_screen_the_hint_says_tap_and_with_a_mouse_it_names_the_keys()
    {
        var (_, touchLink) = await fixture.StartSessionAsync("touch-annotator");
        var phone = await fixture.NewPageAsync(390, 844, touch: true);
        await phone.GotoAsync(touchLink);
        await new Annotator(phone, phone.MainFrame).OpenAsync();
        Assert.Equal("Tap the label that fits.", await phone.Locator("#labels-hint").InnerTextAsync());
        Assert.Equal(0, await phone.Locator("#label-buttons kbd").CountAsync());
        await Browser.ShotAsync(phone, "annotate-390-touch-item");

        var (_, mouseLink) = await fixture.StartSessionAsync("mouse-annotator");
        var desk = await fixture.NewPageAsync();
        await desk.GotoAsync(mouseLink);
        await new Annotator(desk, desk.MainFrame).OpenAsync();
        Assert.Equal("Keys 1–3 choose a label.", await desk.Locator("#labels-hint").InnerTextAsync());
        Assert.Equal(3, await desk.Locator("#label-buttons kbd").CountAsync());
    }

    [Fact]
    public async Task A_second_check_is_announced_and_numbers_its_items_from_one()
    {
        var (_, link) = await fixture.StartSessionAsync("retaking-annotator");
        var page = await fixture.NewPageAsync();
        await page.GotoAsync(link);
        var annotator = new Annotator(page, page.MainFrame);
        await annotator.OpenAsync();
        bool failedFirst = false, announcedSecond = false, numberedFromOne = false;
        for (var i = 0; i < 400 && annotator.Screen.View != "end"; i++)
        {
            switch (annotator.Screen.View)
            {
                case "item":
                    var phase = await page.Locator("#progress-phase").InnerTextAsync();
                    if (phase.StartsWith("Second check", StringComparison.Ordinal) && !numberedFromOne)
                    {
                        Assert.Equal("Second check · item 1", phase);
                        Assert.StartsWith("Second check, item 1:", await page.Locator("#item-heading").InnerTextAsync(), StringComparison.Ordinal);
                        await Browser.ShotAsync(page, "annotate-09-second-check");
                        numberedFromOne = true;
                    }
                    // Every answer of the first check is wrong, so it fails; everything else is answered right.
                    await annotator.AnswerAsync(keyboard: false, correct: !(phase.StartsWith("Check", StringComparison.Ordinal) && !failedFirst));
                    break;
                case "notice":
                    var heading = await page.Locator("#notice-heading").InnerTextAsync();
                    if (heading.Contains("did not pass", StringComparison.Ordinal)) failedFirst = true;
                    if (heading == "Teaching is done. Now the second check.") announcedSecond = true;
                    await annotator.ContinueAsync(keyboard: false);
                    break;
                default:
                    await annotator.ContinueAsync(keyboard: false);
                    break;
            }
        }
        Assert.True(failedFirst, "the first check did not fail");
        Assert.True(announcedSecond, "the second check was not announced");
        Assert.True(numberedFromOne, "the second check's items were not numbered from 1");
    }

    [Fact]
    public async Task Teaching_progress_counts_items_and_never_moves_back_after_wrong_answers()
    {
        var (_, link) = await fixture.StartSessionAsync("struggling-annotator");
        var page = await fixture.NewPageAsync();
        await page.GotoAsync(link);
        var annotator = new Annotator(page, page.MainFrame);
        await annotator.OpenAsync();
        var seen = new List<int>();
        for (var answered = 0; answered < 4 && annotator.Screen.View is "item" or "feedback"; )
        {
            if (annotator.Screen.View == "feedback") { await annotator.ContinueAsync(keyboard: false); continue; }
            Assert.StartsWith($"Teaching · item {answered + 1} of at most ", await page.Locator("#progress-phase").InnerTextAsync(), StringComparison.Ordinal);
            Assert.DoesNotContain("%", await page.Locator("#progress").InnerTextAsync(), StringComparison.Ordinal);
            seen.Add(int.Parse(await page.Locator("#meter").GetAttributeAsync("aria-valuenow") ?? "-1", System.Globalization.CultureInfo.InvariantCulture));
            // Three wrong answers first, then a right one: the bar only counts items.
            await annotator.AnswerAsync(keyboard: false, correct: answered == 3);
            answered++;
        }
        Assert.Equal(4, seen.Count);
        Assert.Equal(seen.Order(), seen);
        Assert.True(seen[^1] > seen[0]);
        await Browser.ShotAsync(page, "annotate-10-plain-progress");
    }
}
