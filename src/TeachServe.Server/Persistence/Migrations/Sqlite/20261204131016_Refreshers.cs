using Microsoft.EntityFrameworkCore.Migrations;

#nullable disable

namespace TeachServe.Server.Persistence.Migrations.Sqlite
{
    /// <inheritdoc />
    public partial class Refreshers : Migration
    {
        /// <inheritdoc />
        protected override void Up(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.AddColumn<string>(
                name: "Purpose",
                table: "Sessions",
                type: "TEXT",
                maxLength: 16,
                nullable: false,
                defaultValue: "onboarding");

            migrationBuilder.CreateTable(
                name: "RefresherStarts",
                columns: table => new
                {
                    SessionId = table.Column<string>(type: "TEXT", maxLength: 40, nullable: false),
                    ProjectId = table.Column<string>(type: "TEXT", maxLength: 40, nullable: false),
                    WorkerRef = table.Column<string>(type: "TEXT", maxLength: 200, nullable: false),
                    FromSessionId = table.Column<string>(type: "TEXT", maxLength: 40, nullable: false),
                    LiveChecks = table.Column<int>(type: "INTEGER", nullable: false),
                    MaxItems = table.Column<int>(type: "INTEGER", nullable: false),
                    Weights = table.Column<byte[]>(type: "BLOB", nullable: false),
                    CreatedAt = table.Column<long>(type: "INTEGER", nullable: false),
                    AppliedAt = table.Column<long>(type: "INTEGER", nullable: true)
                },
                constraints: table =>
                {
                    table.PrimaryKey("PK_RefresherStarts", x => x.SessionId);
                    table.ForeignKey(
                        name: "FK_RefresherStarts_Sessions_SessionId",
                        column: x => x.SessionId,
                        principalTable: "Sessions",
                        principalColumn: "Id",
                        onDelete: ReferentialAction.Cascade);
                });

            migrationBuilder.CreateIndex(
                name: "IX_RefresherStarts_ProjectId_WorkerRef_AppliedAt",
                table: "RefresherStarts",
                columns: new[] { "ProjectId", "WorkerRef", "AppliedAt" });
        }

        /// <inheritdoc />
        protected override void Down(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.DropTable(
                name: "RefresherStarts");

            migrationBuilder.DropColumn(
                name: "Purpose",
                table: "Sessions");
        }
    }
}
