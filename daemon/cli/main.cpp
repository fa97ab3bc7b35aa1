// `stagewell`: the command-line program. Each subcommand lives in its own file (cmd_*.cpp).
#include <CLI/CLI.hpp>
#include <exception>
#include <iostream>

#include "command.hpp"
#include "commands.hpp"

int main(int argc, char** argv) {
  using namespace stagewell::cli;
  CLI::App program{
      "stagewell: stage readings to discharge by Manning's equation, kept in SQLite.\n"
      "Discharge computed this way is an estimate: verify it with field measurements."};
  program.name("stagewell");
  program.set_version_flag("--version", "stagewell " STAGEWELL_VERSION);
  program.require_subcommand(1);

  Action chosen;
  add_check_command(program, chosen);
  add_flow_command(program, chosen);
  add_depth_command(program, chosen);
  add_table_command(program, chosen);
  add_ingest_command(program, chosen);
  add_daily_command(program, chosen);
  add_stats_command(program, chosen);
  add_plot_command(program, chosen);
  add_send_command(program, chosen);
  add_recompute_command(program, chosen);
  add_backup_command(program, chosen);
  add_export_command(program, chosen);
  add_units_command(program, chosen);
  add_gaugings_command(program, chosen);
  add_warehouse_command(program, chosen);
  add_calibrate_command(program, chosen);

  try {
    program.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return program.exit(e);
  } catch (const CLI::CallForAllHelp& e) {
    return program.exit(e);
  } catch (const CLI::CallForVersion& e) {
    return program.exit(e);
  } catch (const CLI::ParseError& e) {
    program.exit(e);  // prints the message and a hint to stderr
    return kUsage;
  }
  try {
    return chosen ? chosen() : kUsage;
  } catch (const std::exception& e) {
    std::cerr << "stagewell: " << e.what() << '\n';
    return kInvalidInput;
  }
}
