using Microsoft.EntityFrameworkCore.Migrations;

#nullable disable

namespace Runfold.Server.Data.Migrations.Sqlite
{
    /// <inheritdoc />
    public partial class ClaimAndLapseQueues : Migration
    {
        /// <inheritdoc />
        protected override void Up(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.DropIndex(
                name: "ix_runs_state_lease_expires_at",
                table: "runs");

            migrationBuilder.DropIndex(
                name: "ix_runs_study_id_state_number",
                table: "runs");

            migrationBuilder.CreateIndex(
                name: "ix_runs_claimed_lease",
                table: "runs",
                column: "lease_expires_at",
                filter: "state = 'claimed'");

            migrationBuilder.CreateIndex(
                name: "ix_runs_open_queue",
                table: "runs",
                columns: new[] { "study_id", "number" },
                filter: "state = 'open'");
        }

        /// <inheritdoc />
        protected override void Down(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.DropIndex(
                name: "ix_runs_claimed_lease",
                table: "runs");

            migrationBuilder.DropIndex(
                name: "ix_runs_open_queue",
                table: "runs");

            migrationBuilder.CreateIndex(
                name: "ix_runs_state_lease_expires_at",
                table: "runs",
                columns: new[] { "state", "lease_expires_at" });

            migrationBuilder.CreateIndex(
                name: "ix_runs_study_id_state_number",
                table: "runs",
                columns: new[] { "study_id", "state", "number" });
        }
    }
}
