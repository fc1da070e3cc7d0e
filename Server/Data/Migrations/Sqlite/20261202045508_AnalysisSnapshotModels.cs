using Microsoft.EntityFrameworkCore.Migrations;

#nullable disable

namespace Runfold.Server.Data.Migrations.Sqlite
{
    /// <inheritdoc />
    public partial class AnalysisSnapshotModels : Migration
    {
        /// <inheritdoc />
        protected override void Up(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.AddColumn<string>(
                name: "models_json",
                table: "analysis_snapshots",
                type: "TEXT",
                nullable: true);

            migrationBuilder.AddColumn<string>(
                name: "summary_json",
                table: "analysis_snapshots",
                type: "TEXT",
                nullable: true);
        }

        /// <inheritdoc />
        protected override void Down(MigrationBuilder migrationBuilder)
        {
            migrationBuilder.DropColumn(
                name: "models_json",
                table: "analysis_snapshots");

            migrationBuilder.DropColumn(
                name: "summary_json",
                table: "analysis_snapshots");
        }
    }
}
