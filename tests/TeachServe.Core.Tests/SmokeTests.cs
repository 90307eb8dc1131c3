namespace TeachServe.Core.Tests;

public class SmokeTests
{
    [Fact]
    public void Labels_are_required() => Assert.NotEmpty(TeachServe.Core.Projects.PolicyNames.All);
}
