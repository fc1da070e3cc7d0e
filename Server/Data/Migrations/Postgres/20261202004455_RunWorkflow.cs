using System;
using Microsoft.EntityFrameworkCore.Migrations;
using Npgsql.EntityFrameworkCore.PostgreSQL.Metadata;

#nullable disable

namespace Runfold.Server.Data.Migrations.Postgres
{
    /// <inheritdoc />
    public partial class RunWorkflow : Migration
    {
        /// <inheritdoc />
        protected override void Up(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.DropIndex(
                name: "ix_runs_study_id_state_number",
                table: "runs");

            migrationBuilder.AddColumn<double>(
                name: "lease_hours",
                table: "runs",
                type: "double precision",
                nullable: true);

            migrationBuilder.AddColumn<int>(
                name: "revision_count",
                table: "runs",
                type: "integer",
                nullable: false,
                defaultValue: 0);

            migrationBuilder.AddColumn<string>(
                name: "request_hash",
                table: "result_revisions",
                type: "character varying(64)",
                maxLength: 64,
                nullable: true);

            migrationBuilder.CreateTable(
                name: "invitations",
                columns: table => new
                {
                    id = table.Column<int>(type: "integer", nullable: false)
                        .Annotation("Npgsql:ValueGenerationStrategy", NpgsqlValueGenerationStrategy.IdentityByDefaultColumn),
                    study_id = table.Column<int>(type: "integer", nullable: false),
                    role = table.Column<string>(type: "character varying(16)", maxLength: 16, nullable: false),
                    code_hash = table.Column<string>(type: "character varying(64)", maxLength: 64, nullable: false),
                    note = table.Column<string>(type: "character varying(200)", maxLength: 200, nullable: true),
                    created_by_id = table.Column<Guid>(type: "uuid", nullable: false),
                    created_at = table.Column<DateTimeOffset>(type: "timestamp with time zone", nullable: false),
                    expires_at = table.Column<DateTimeOffset>(type: "timestamp with time zone", nullable: false),
                    accepted_at = table.Column<DateTimeOffset>(type: "timestamp with time zone", nullable: true),
                    accepted_by_id = table.Column<Guid>(type: "uuid", nullable: true),
                    revoked_at = table.Column<DateTimeOffset>(type: "timestamp with time zone", nullable: true)
                },
                constraints: table =>
                {
                    table.PrimaryKey("pk_invitations", x => x.id);
                    table.ForeignKey(
                        name: "fk_invitations_studies_study_id",
                        column: x => x.study_id,
                        principalTable: "studies",
                        principalColumn: "id",
                        onDelete: ReferentialAction.Cascade);
                    table.ForeignKey(
                        name: "fk_invitations_users_created_by_id",
                        column: x => x.created_by_id,
                        principalTable: "users",
                        principalColumn: "id",
                        onDelete: ReferentialAction.Restrict);
                });

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

            migrationBuilder.CreateIndex(
                name: "ix_invitations_code_hash",
                table: "invitations",
                column: "code_hash",
                unique: true);

            migrationBuilder.CreateIndex(
                name: "ix_invitations_created_by_id",
                table: "invitations",
                column: "created_by_id");

            migrationBuilder.CreateIndex(
                name: "ix_invitations_study_id",
                table: "invitations",
                column: "study_id");
        }

        /// <inheritdoc />
        protected override void Down(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.DropTable(
                name: "invitations");

            migrationBuilder.DropIndex(
                name: "ix_runs_claimed_lease",
                table: "runs");

            migrationBuilder.DropIndex(
                name: "ix_runs_open_queue",
                table: "runs");

            migrationBuilder.DropColumn(
                name: "lease_hours",
                table: "runs");

            migrationBuilder.DropColumn(
                name: "revision_count",
                table: "runs");

            migrationBuilder.DropColumn(
                name: "request_hash",
                table: "result_revisions");

            migrationBuilder.CreateIndex(
                name: "ix_runs_study_id_state_number",
                table: "runs",
                columns: new[] { "study_id", "state", "number" });
        }
    }
}
