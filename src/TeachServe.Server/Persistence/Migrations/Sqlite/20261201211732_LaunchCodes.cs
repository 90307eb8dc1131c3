using Microsoft.EntityFrameworkCore.Migrations;

#nullable disable

namespace TeachServe.Server.Persistence.Migrations.Sqlite
{
    /// <inheritdoc />
    public partial class LaunchCodes : Migration
    {
        /// <inheritdoc />
        protected override void Up(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.CreateTable(
                name: "LaunchCodes",
                columns: table => new
                {
                    CodeHash = table.Column<byte[]>(type: "BLOB", maxLength: 32, nullable: false),
                    SessionId = table.Column<string>(type: "TEXT", maxLength: 40, nullable: false),
                    SealedToken = table.Column<byte[]>(type: "BLOB", maxLength: 512, nullable: false),
                    ExpiresAt = table.Column<long>(type: "INTEGER", nullable: false)
                },
                constraints: table =>
                {
                    table.PrimaryKey("PK_LaunchCodes", x => x.CodeHash);
                    table.ForeignKey(
                        name: "FK_LaunchCodes_Sessions_SessionId",
                        column: x => x.SessionId,
                        principalTable: "Sessions",
                        principalColumn: "Id",
                        onDelete: ReferentialAction.Cascade);
                });

            migrationBuilder.CreateIndex(
                name: "IX_LaunchCodes_ExpiresAt",
                table: "LaunchCodes",
                column: "ExpiresAt");

            migrationBuilder.CreateIndex(
                name: "IX_LaunchCodes_SessionId",
                table: "LaunchCodes",
                column: "SessionId");
        }

        /// <inheritdoc />
        protected override void Down(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.DropTable(
                name: "LaunchCodes");
        }
    }
}
