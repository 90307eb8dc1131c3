namespace TeachServe.Server.Projects;

/// <summary>Upper bounds on what a project document may contain; each is checked and answered with 4xx.</summary>
public static class ProjectLimits
{
    public const int NameLength = 200;
    public const int LabelLength = 100;
    public const int MaxLabels = 50;
    public const int UrlLength = 2000;
    public const int SecretLength = 200;
    public const int MinSecretLength = 16;
    public const int MaxDocumentBytes = 4 * 1024 * 1024;
}
