using Microsoft.EntityFrameworkCore.Migrations;

#nullable disable

namespace TeachServe.Server.Persistence.Migrations.Sqlite
{
    /// <inheritdoc />
    public partial class LiveQuality : Migration
    {
        /// <inheritdoc />
        protected override void Up(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.CreateTable(
                name: "LiveChecks",
                columns: table => new
                {
                    Id = table.Column<long>(type: "INTEGER", nullable: false)
                        .Annotation("Sqlite:Autoincrement", true),
                    ProjectId = table.Column<string>(type: "TEXT", maxLength: 40, nullable: false),
                    OutcomeId = table.Column<string>(type: "TEXT", maxLength: 100, nullable: false),
                    WorkerRef = table.Column<string>(type: "TEXT", maxLength: 200, nullable: false),
                    ItemId = table.Column<string>(type: "TEXT", maxLength: 200, nullable: false),
                    Label = table.Column<string>(type: "TEXT", maxLength: 100, nullable: false),
                    KnownLabel = table.Column<string>(type: "TEXT", maxLength: 100, nullable: false),
                    Wrong = table.Column<bool>(type: "INTEGER", nullable: false),
                    AnsweredAt = table.Column<long>(type: "INTEGER", nullable: false),
                    ReceivedAt = table.Column<long>(type: "INTEGER", nullable: false)
                },
                constraints: table =>
                {
                    table.PrimaryKey("PK_LiveChecks", x => x.Id);
                    table.ForeignKey(
                        name: "FK_LiveChecks_Projects_ProjectId",
                        column: x => x.ProjectId,
                        principalTable: "Projects",
                        principalColumn: "Id",
                        onDelete: ReferentialAction.Cascade);
                });

            migrationBuilder.CreateTable(
                name: "LiveMonitors",
                columns: table => new
                {
                    ProjectId = table.Column<string>(type: "TEXT", maxLength: 40, nullable: false),
                    WorkerRef = table.Column<string>(type: "TEXT", maxLength: 200, nullable: false),
                    SessionId = table.Column<string>(type: "TEXT", maxLength: 40, nullable: false),
                    ModelVersion = table.Column<int>(type: "INTEGER", nullable: false),
                    State = table.Column<byte[]>(type: "BLOB", maxLength: 1024, nullable: false),
                    Status = table.Column<string>(type: "TEXT", maxLength: 16, nullable: false),
                    Checks = table.Column<int>(type: "INTEGER", nullable: false),
                    Errors = table.Column<int>(type: "INTEGER", nullable: false),
                    Alarms = table.Column<int>(type: "INTEGER", nullable: false),
                    LastAnsweredAt = table.Column<long>(type: "INTEGER", nullable: false),
                    LastCheckId = table.Column<long>(type: "INTEGER", nullable: false),
                    LastAlarmAt = table.Column<long>(type: "INTEGER", nullable: true),
                    LastAlarm = table.Column<string>(type: "TEXT", maxLength: 40, nullable: true),
                    StartedAt = table.Column<long>(type: "INTEGER", nullable: false),
                    UpdatedAt = table.Column<long>(type: "INTEGER", nullable: false),
                    Revision = table.Column<int>(type: "INTEGER", nullable: false)
                },
                constraints: table =>
                {
                    table.PrimaryKey("PK_LiveMonitors", x => new { x.ProjectId, x.WorkerRef });
                    table.ForeignKey(
                        name: "FK_LiveMonitors_Projects_ProjectId",
                        column: x => x.ProjectId,
                        principalTable: "Projects",
                        principalColumn: "Id",
                        onDelete: ReferentialAction.Cascade);
                });

            migrationBuilder.CreateIndex(
                name: "IX_LiveChecks_ProjectId_OutcomeId",
                table: "LiveChecks",
                columns: new[] { "ProjectId", "OutcomeId" },
                unique: true);

            migrationBuilder.CreateIndex(
                name: "IX_LiveChecks_ProjectId_WorkerRef_AnsweredAt_Id",
                table: "LiveChecks",
                columns: new[] { "ProjectId", "WorkerRef", "AnsweredAt", "Id" });
        }

        /// <inheritdoc />
        protected override void Down(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.DropTable(
                name: "LiveChecks");

            migrationBuilder.DropTable(
                name: "LiveMonitors");
        }
    }
}
