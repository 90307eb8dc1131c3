using Microsoft.EntityFrameworkCore.Migrations;

#nullable disable

namespace TeachServe.Server.Persistence.Migrations.Postgres
{
    /// <inheritdoc />
    public partial class CompileBounds : Migration
    {
        /// <inheritdoc />
        protected override void Up(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.AddColumn<string>(
                name: "SnapshotHash",
                table: "ModelVersions",
                type: "character varying(64)",
                maxLength: 64,
                nullable: true);

            // Before this index, concurrent compiles could leave several 'compiling' rows in one project; keep the newest
            // (the start-up resume compiles it) and mark the others failed, so the unique index can be created.
            migrationBuilder.Sql(
                "UPDATE \"ModelVersions\" SET \"Status\" = 'failed', \"Error\" = 'Superseded by a later compile of the same project.' " +
                "WHERE \"Status\" = 'compiling' AND \"Number\" < (SELECT MAX(m.\"Number\") FROM \"ModelVersions\" m " +
                "WHERE m.\"ProjectId\" = \"ModelVersions\".\"ProjectId\" AND m.\"Status\" = 'compiling');");

            migrationBuilder.CreateIndex(
                name: "IX_ModelVersions_OneCompilingPerProject",
                table: "ModelVersions",
                column: "ProjectId",
                unique: true,
                filter: "\"Status\" = 'compiling'");

            migrationBuilder.CreateIndex(
                name: "IX_ModelVersions_ProjectId_SnapshotHash",
                table: "ModelVersions",
                columns: new[] { "ProjectId", "SnapshotHash" });
        }

        /// <inheritdoc />
        protected override void Down(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.DropIndex(
                name: "IX_ModelVersions_OneCompilingPerProject",
                table: "ModelVersions");

            migrationBuilder.DropIndex(
                name: "IX_ModelVersions_ProjectId_SnapshotHash",
                table: "ModelVersions");

            migrationBuilder.DropColumn(
                name: "SnapshotHash",
                table: "ModelVersions");
        }
    }
}
