using Microsoft.EntityFrameworkCore.Migrations;

#nullable disable

namespace TeachServe.Server.Persistence.Migrations.Sqlite
{
    /// <inheritdoc />
    public partial class TestExposure : Migration
    {
        /// <inheritdoc />
        protected override void Up(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.CreateTable(
                name: "TestExposures",
                columns: table => new
                {
                    ProjectId = table.Column<string>(type: "TEXT", maxLength: 40, nullable: false),
                    ItemId = table.Column<string>(type: "TEXT", maxLength: 200, nullable: false),
                    Sessions = table.Column<int>(type: "INTEGER", nullable: false)
                },
                constraints: table =>
                {
                    table.PrimaryKey("PK_TestExposures", x => new { x.ProjectId, x.ItemId });
                    table.ForeignKey(
                        name: "FK_TestExposures_Projects_ProjectId",
                        column: x => x.ProjectId,
                        principalTable: "Projects",
                        principalColumn: "Id",
                        onDelete: ReferentialAction.Cascade);
                });
        }

        /// <inheritdoc />
        protected override void Down(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.DropTable(
                name: "TestExposures");
        }
    }
}
