// A site's `alarms:` (docs/checks-and-alarms.md, "Alarms"): low and high discharge, a sensor gone
// quiet, and a stage rising fast. Every alarm is off unless its threshold is written.
#include <fmt/format.h>

#include "config/key_table.hpp"
#include "config/readers.hpp"
#include "config/value_readers.hpp"

namespace stagewell::config_detail {
namespace {

// The keys shared by the three threshold alarms; `level` names the threshold ("below", "above",
// "rate"). Discharge thresholds are greater than 0: a discharge is never negative, so a low
// threshold of 0 could never raise; a high one of 0 would always be raised.
std::vector<Key<ThresholdAlarmSpec>> threshold_keys(std::string_view level) {
  return {
      {level, required(), into(number(Bounds::above(0.0)), &ThresholdAlarmSpec::threshold)},
      {"hysteresis", defaults("0"),
       into(number(Bounds::at_least(0.0)), &ThresholdAlarmSpec::hysteresis)},
      {"hold", defaults("0"), into(duration(Bounds::at_least(0.0)), &ThresholdAlarmSpec::hold_s)},
  };
}

void read_threshold(const At& at, Context& cx, std::string_view level, ThresholdAlarmSpec& out) {
  read_map(at, threshold_keys(level), cx, out);
}

struct StaleKeys {
  std::optional<double> after_s;
};

void read_rising(const At& at, Context& cx, AlarmsSpec& out) {
  struct Rising {
    ThresholdAlarmSpec spec;
    double window_s = 3600.0;
  } rising;
  const std::vector<Key<Rising>> keys{
      {"rate", required(),
       [](const At& value, Context& c, Rising& r) {
         if (auto rate = number(Bounds::above(0.0))(value, c)) r.spec.threshold = *rate;
       }},
      {"hysteresis", defaults("0"),
       [](const At& value, Context& c, Rising& r) {
         if (auto h = number(Bounds::at_least(0.0))(value, c)) r.spec.hysteresis = *h;
       }},
      {"hold", defaults("0"),
       [](const At& value, Context& c, Rising& r) {
         if (auto hold = duration(Bounds::at_least(0.0))(value, c)) r.spec.hold_s = *hold;
       }},
      // At least a minute: a rate across a shorter window is mostly sensor noise (common practice).
      {"window", defaults("1h"), into(duration(Bounds::at_least(60.0)), &Rising::window_s)},
  };
  read_map(at, keys, cx, rising);
  out.rising = rising.spec;
  out.rising_window_s = rising.window_s;
}

}  // namespace

void read_alarms(const At& at, Context& cx, AlarmsSpec& out) {
  const std::vector<Key<AlarmsSpec>> keys{
      {"low_flow", optional(),
       [](const At& value, Context& c, AlarmsSpec& a) {
         read_threshold(value, c, "below", a.low_flow);
       }},
      {"high_flow", optional(),
       [](const At& value, Context& c, AlarmsSpec& a) {
         read_threshold(value, c, "above", a.high_flow);
       }},
      {"stale", optional(),
       [](const At& value, Context& c, AlarmsSpec& a) {
         const std::vector<Key<StaleKeys>> stale_keys{
             {"after", required(), into(duration(Bounds::above(0.0)), &StaleKeys::after_s)}};
         StaleKeys stale;
         read_map(value, stale_keys, c, stale);
         a.stale_s = stale.after_s;
       }},
      {"rising", optional(), read_rising},
  };
  read_map(at, keys, cx, out);

  // A high alarm that could never clear: discharge is never below 0.
  const auto& high = out.high_flow;
  if (high.threshold && high.hysteresis >= *high.threshold) {
    if (const auto section = find(at, "high_flow")) {
      if (const auto hysteresis = find(*section, "hysteresis")) {
        cx.error(*hysteresis,
                 fmt::format("must be less than above ({}): the alarm clears below above - "
                             "hysteresis, and a discharge is never below 0",
                             *high.threshold));
      }
    }
  }
  // Bands that overlap would have both alarms raised at once, or one clear into the other.
  const auto& low = out.low_flow;
  if (low.threshold && high.threshold &&
      *low.threshold + low.hysteresis >= *high.threshold - high.hysteresis) {
    if (const auto section = find(at, "high_flow")) {
      if (const auto above = find(*section, "above")) {
        cx.error(*above,
                 fmt::format("must be greater than low_flow's clear level plus this hysteresis "
                             "(below + hysteresis = {}, plus {})",
                             *low.threshold + low.hysteresis, high.hysteresis));
      }
    }
  }
}

}  // namespace stagewell::config_detail
