using System;
using Microsoft.EntityFrameworkCore.Migrations;
using Npgsql.EntityFrameworkCore.PostgreSQL.Metadata;

#nullable disable

namespace TeachServe.Server.Persistence.Migrations.Postgres
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
                    Id = table.Column<long>(type: "bigint", nullable: false)
                        .Annotation("Npgsql:ValueGenerationStrategy", NpgsqlValueGenerationStrategy.IdentityByDefaultColumn),
                    ProjectId = table.Column<string>(type: "character varying(40)", maxLength: 40, nullable: false),
                    OutcomeId = table.Column<string>(type: "character varying(100)", maxLength: 100, nullable: false),
                    WorkerRef = table.Column<string>(type: "character varying(200)", maxLength: 200, nullable: false),
                    ItemId = table.Column<string>(type: "character varying(200)", maxLength: 200, nullable: false),
                    Label = table.Column<string>(type: "character varying(100)", maxLength: 100, nullable: false),
                    KnownLabel = table.Column<string>(type: "character varying(100)", maxLength: 100, nullable: false),
                    Wrong = table.Column<bool>(type: "boolean", nullable: false),
                    AnsweredAt = table.Column<DateTimeOffset>(type: "timestamp with time zone", nullable: false),
                    ReceivedAt = table.Column<DateTimeOffset>(type: "timestamp with time zone", nullable: false)
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
                    ProjectId = table.Column<string>(type: "character varying(40)", maxLength: 40, nullable: false),
                    WorkerRef = table.Column<string>(type: "character varying(200)", maxLength: 200, nullable: false),
                    SessionId = table.Column<string>(type: "character varying(40)", maxLength: 40, nullable: false),
                    ModelVersion = table.Column<int>(type: "integer", nullable: false),
                    State = table.Column<byte[]>(type: "bytea", maxLength: 1024, nullable: false),
                    Status = table.Column<string>(type: "character varying(16)", maxLength: 16, nullable: false),
                    Checks = table.Column<int>(type: "integer", nullable: false),
                    Errors = table.Column<int>(type: "integer", nullable: false),
                    Alarms = table.Column<int>(type: "integer", nullable: false),
                    LastAnsweredAt = table.Column<DateTimeOffset>(type: "timestamp with time zone", nullable: false),
                    LastCheckId = table.Column<long>(type: "bigint", nullable: false),
                    LastAlarmAt = table.Column<DateTimeOffset>(type: "timestamp with time zone", nullable: true),
                    LastAlarm = table.Column<string>(type: "character varying(40)", maxLength: 40, nullable: true),
                    StartedAt = table.Column<DateTimeOffset>(type: "timestamp with time zone", nullable: false),
                    UpdatedAt = table.Column<DateTimeOffset>(type: "timestamp with time zone", nullable: false),
                    Revision = table.Column<int>(type: "integer", nullable: false)
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
