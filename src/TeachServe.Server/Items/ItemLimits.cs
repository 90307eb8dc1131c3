namespace TeachServe.Server.Items;

public static class ItemLimits
{
    public const int IdLength = 200;
    public const int TextLength = 20_000;
    public const int SvgLength = 200_000;
    public const int ExplanationLength = 4_000;
    public const int MaxFeatures = 200;
    public const int MaxAttributes = 200;
    public const int NameLength = 100;
    public const int EmbeddingModelLength = 200;
}
