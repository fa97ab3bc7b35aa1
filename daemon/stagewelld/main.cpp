// `stagewelld`: the service. Runs in the foreground (systemd supervises it: no forking, no pid
// file) and logs to stderr, and to a file when configured.
#include <spdlog/spdlog.h>
#include <sys/stat.h>

#include <CLI/CLI.hpp>
#include <boost/asio/io_context.hpp>
#include <utility>  // before Asio: Boost 1.74's headers need it under C++20 and later

#include "logging.hpp"
#include "service.hpp"

int main(int argc, char** argv) {
  CLI::App program{
      "stagewelld: the stagewell service. Reads stage readings from the configured sources,\n"
      "converts them to discharge, flags doubtful ones and stores everything in SQLite.\n"
      "Runs in the foreground; SIGTERM/SIGINT stop it cleanly, SIGHUP reloads the configuration."};
  program.name("stagewelld");
  program.set_version_flag("--version", "stagewelld " STAGEWELL_VERSION);
  std::string config_path(stagewell::kSystemConfigFile);
  std::string level = "info";
  program.add_option("-c,--config", config_path, "Configuration file (YAML)")
      ->capture_default_str()
      ->check(CLI::ExistingFile);
  program.add_option(
      "--log-level", level,
      "Log level until the configuration's own applies: trace, debug, info, warn, error");
  try {
    program.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = program.exit(e);
    return code == 0 ? 0 : 2;
  }

  // Whatever umask it was started with (a shell's 022), the database, its -wal and -shm files
  // and the log are the service's and its group's (analysts reading the database): not others'.
  // systemd's unit sets the same (UMask=0007).
  ::umask(S_IRWXO);
  stagewell::service::Logging logging(level);
  boost::asio::io_context io;
  stagewell::service::Service service(io, config_path, logging);
  if (!service.start()) return 1;
  io.run();
  return service.exit_code();
}
