using Microsoft.EntityFrameworkCore.Migrations;

#nullable disable

namespace TeachServe.Server.Persistence.Migrations.Postgres
{
    /// <inheritdoc />
    public partial class LiveModelView : Migration
    {
        /// <inheritdoc />
        protected override void Up(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.AddColumn<byte[]>(
                name: "Belief",
                table: "LiveMonitors",
                type: "bytea",
                nullable: true);

            migrationBuilder.AddColumn<double>(
                name: "ForgettingPerCheck",
                table: "LiveMonitors",
                type: "double precision",
                nullable: false,
                defaultValue: 0.0);

            migrationBuilder.AddColumn<double>(
                name: "ModelError",
                table: "LiveMonitors",
                type: "double precision",
                nullable: true);

            migrationBuilder.AddColumn<double>(
                name: "ModelRisk",
                table: "LiveMonitors",
                type: "double precision",
                nullable: true);

            migrationBuilder.AddColumn<double>(
                name: "TargetAnswerError",
                table: "LiveMonitors",
                type: "double precision",
                nullable: false,
                defaultValue: 0.0);
        }

        /// <inheritdoc />
        protected override void Down(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.DropColumn(
                name: "Belief",
                table: "LiveMonitors");

            migrationBuilder.DropColumn(
                name: "ForgettingPerCheck",
                table: "LiveMonitors");

            migrationBuilder.DropColumn(
                name: "ModelError",
                table: "LiveMonitors");

            migrationBuilder.DropColumn(
                name: "ModelRisk",
                table: "LiveMonitors");

            migrationBuilder.DropColumn(
                name: "TargetAnswerError",
                table: "LiveMonitors");
        }
    }
}
