namespace TeachServe.Server.Projects;

/// <summary>Upper bounds on what a project document may contain; each is checked and answered with 4xx.</summary>
public static class ProjectLimits
{
    public const int NameLength = 200;
    public const int LabelLength = 100;
    public const int MaxLabels = 50;
    public const int UrlLength = 2000;
    /// <summary>
    /// Column length of the stored (encrypted, base64url) secret: a <c>whsec_</c> secret of 64 bytes (94 characters)
    /// protects to about 250, and the 200-character secrets older servers accepted to about 400.
    /// </summary>
    public const int StoredSecretLength = 1000;
    public const int MaxDocumentBytes = 4 * 1024 * 1024;
}
