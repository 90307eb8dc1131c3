using Microsoft.EntityFrameworkCore.Migrations;

#nullable disable

namespace TeachServe.Server.Persistence.Migrations.Sqlite
{
    /// <inheritdoc />
    public partial class Initial : Migration
    {
        /// <inheritdoc />
        protected override void Up(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.DropColumn(
                name: "Blob",
                table: "ModelVersions");

            migrationBuilder.DropColumn(
                name: "DisplayJson",
                table: "ModelVersions");

            migrationBuilder.AddColumn<int>(
                name: "HypothesisCount",
                table: "ModelVersions",
                type: "INTEGER",
                nullable: false,
                defaultValue: 0);

            migrationBuilder.AddColumn<string>(
                name: "ItemsJson",
                table: "ModelVersions",
                type: "TEXT",
                nullable: false,
                defaultValue: "");

            migrationBuilder.AddColumn<int>(
                name: "TargetIndex",
                table: "ModelVersions",
                type: "INTEGER",
                nullable: false,
                defaultValue: 0);
        }

        /// <inheritdoc />
        protected override void Down(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.DropColumn(
                name: "HypothesisCount",
                table: "ModelVersions");

            migrationBuilder.DropColumn(
                name: "ItemsJson",
                table: "ModelVersions");

            migrationBuilder.DropColumn(
                name: "TargetIndex",
                table: "ModelVersions");

            migrationBuilder.AddColumn<byte[]>(
                name: "Blob",
                table: "ModelVersions",
                type: "BLOB",
                nullable: true);

            migrationBuilder.AddColumn<string>(
                name: "DisplayJson",
                table: "ModelVersions",
                type: "TEXT",
                nullable: true);
        }
    }
}
