// One log line per alarm raised or cleared, with its values in their units, so that whoever reads
// the log (or the journal) knows what crossed which level without opening the database.
#include <spdlog/spdlog.h>

#include "stagewell/alarms.hpp"
#include "stagewell/units.hpp"

namespace stagewell::alarms {
namespace {

std::string with_unit(AlarmKind kind, double value, units::System system,
                      units::Length stage_units) {
  switch (kind) {
    case AlarmKind::low_flow:
    case AlarmKind::high_flow:
      return fmt::format("{:.4g} {}", value, units::discharge_symbol(system));
    case AlarmKind::stale:
      return fmt::format("{:.0f} s", value);
    case AlarmKind::rising:
      return fmt::format("{:.4g} {}/h", value, units::symbol(stage_units));
  }
  return fmt::format("{}", value);
}

std::string_view comparison(AlarmKind kind) {
  switch (kind) {
    case AlarmKind::low_flow:
      return "discharge below the threshold";
    case AlarmKind::high_flow:
      return "discharge above the threshold";
    case AlarmKind::stale:
      return "no reading for longer than the threshold";
    case AlarmKind::rising:
      return "stage rising faster than the threshold";
  }
  return "";
}

}  // namespace

void log_event(std::string_view site, const AlarmEvent& event, units::System system,
               units::Length stage_units) {
  const std::string value = with_unit(event.kind, event.value, system, stage_units);
  const std::string threshold = with_unit(event.kind, event.threshold, system, stage_units);
  if (event.change == AlarmEvent::Change::raised) {
    spdlog::warn("alarm raised: site {} {} ({}): value {}, threshold {}", site, name(event.kind),
                 comparison(event.kind), value, threshold);
  } else {
    spdlog::info("alarm cleared: site {} {}: value {}, threshold {}", site, name(event.kind), value,
                 threshold);
  }
}

}  // namespace stagewell::alarms
