// `stagewell units`: every unit the options and the configuration take, with the spelling each
// kind of output uses (symbols for people, UCUM codes for programs) and its size in SI units.
#include <fmt/format.h>

#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "stagewell/units.hpp"

namespace stagewell::cli {
namespace {

int run_units(bool json) {
  const auto listed = units::listing();
  if (json) {
    auto out = nlohmann::json::array();
    for (const auto& u : listed) {
      out.push_back({{"kind", u.kind},
                     {"name", u.option},
                     {"alias", u.alias.empty() ? nlohmann::json(nullptr) : nlohmann::json(u.alias)},
                     {"symbol", u.symbol},
                     {"ucum", u.ucum},
                     {"si_factor", u.si_factor},
                     {"si_unit", u.si_ucum}});
    }
    std::cout << out.dump(2) << '\n';
    return kOk;
  }
  std::cout << "Units: type the name (any case) or the UCUM code; text shows the symbol, JSON,\n"
               "CSV, the database and exports carry the UCUM code.\n";
  std::string_view kind;
  for (const auto& u : listed) {
    if (u.kind != kind) {
      kind = u.kind;
      std::cout << fmt::format("\n{:<8} {:<8} {:<18} {:<17} {}\n", kind, "alias", "symbol",
                               "UCUM code", "in SI units");
    }
    std::cout << fmt::format("{:<8} {:<8} {:<18} {:<17} {:.10g} {}\n", u.option,
                             u.alias.empty() ? "-" : u.alias, u.symbol, u.ucum, u.si_factor,
                             u.si_ucum);
  }
  return kOk;
}

}  // namespace

void add_units_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "units", "List the units of stage, flow and volume, with their symbols and UCUM codes");
  auto json = std::make_shared<bool>(false);
  command->add_flag("--json", *json, "One JSON array, one object per unit");
  command->final_callback([&chosen, json] { chosen = [json] { return run_units(*json); }; });
}

}  // namespace stagewell::cli
