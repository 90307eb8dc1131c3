using Microsoft.EntityFrameworkCore.Migrations;

#nullable disable

namespace TeachServe.Server.Persistence.Migrations.Sqlite
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
                type: "INTEGER",
                nullable: true);

            migrationBuilder.AddColumn<string>(
                name: "EmbeddingModel",
                table: "ModelVersions",
                type: "TEXT",
                nullable: true);

            migrationBuilder.AddColumn<byte[]>(
                name: "Embeddings",
                table: "ModelVersions",
                type: "BLOB",
                nullable: true);

            migrationBuilder.AddColumn<byte[]>(
                name: "Embedding",
                table: "Items",
                type: "BLOB",
                nullable: true);

            migrationBuilder.AddColumn<string>(
                name: "EmbeddingModel",
                table: "Items",
                type: "TEXT",
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
