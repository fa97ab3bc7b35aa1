// The subcommands of `stagewell`. Each adds itself to the program and, when chosen on the command
// line, stores the work to run in `chosen`.
#pragma once

#include <CLI/CLI.hpp>

#include "command.hpp"

namespace stagewell::cli {

void add_check_command(CLI::App& program, Action& chosen);
void add_flow_command(CLI::App& program, Action& chosen);
void add_depth_command(CLI::App& program, Action& chosen);
void add_table_command(CLI::App& program, Action& chosen);
void add_ingest_command(CLI::App& program, Action& chosen);
void add_daily_command(CLI::App& program, Action& chosen);
void add_stats_command(CLI::App& program, Action& chosen);
void add_plot_command(CLI::App& program, Action& chosen);
void add_send_command(CLI::App& program, Action& chosen);
void add_recompute_command(CLI::App& program, Action& chosen);
void add_backup_command(CLI::App& program, Action& chosen);
void add_export_command(CLI::App& program, Action& chosen);
void add_units_command(CLI::App& program, Action& chosen);
void add_gaugings_command(CLI::App& program, Action& chosen);
void add_warehouse_command(CLI::App& program, Action& chosen);
void add_calibrate_command(CLI::App& program, Action& chosen);

}  // namespace stagewell::cli
