using Microsoft.EntityFrameworkCore.Migrations;

#nullable disable

namespace TeachServe.Server.Persistence.Migrations.Postgres
{
    /// <inheritdoc />
    public partial class TextEmbeddings : Migration
    {
        /// <inheritdoc />
        protected override void Up(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.AddColumn<int>(
                name: "EmbeddingDimension",
                table: "ModelVersions",
                type: "integer",
                nullable: true);

            migrationBuilder.AddColumn<string>(
                name: "EmbeddingModel",
                table: "ModelVersions",
                type: "text",
                nullable: true);

            migrationBuilder.AddColumn<byte[]>(
                name: "Embeddings",
                table: "ModelVersions",
                type: "bytea",
                nullable: true);

            migrationBuilder.AddColumn<byte[]>(
                name: "Embedding",
                table: "Items",
                type: "bytea",
                nullable: true);

            migrationBuilder.AddColumn<string>(
                name: "EmbeddingModel",
                table: "Items",
                type: "character varying(200)",
                maxLength: 200,
                nullable: true);
        }

        /// <inheritdoc />
        protected override void Down(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.DropColumn(
                name: "EmbeddingDimension",
                table: "ModelVersions");

            migrationBuilder.DropColumn(
                name: "EmbeddingModel",
                table: "ModelVersions");

            migrationBuilder.DropColumn(
                name: "Embeddings",
                table: "ModelVersions");

            migrationBuilder.DropColumn(
                name: "Embedding",
                table: "Items");

            migrationBuilder.DropColumn(
                name: "EmbeddingModel",
                table: "Items");
        }
    }
}
