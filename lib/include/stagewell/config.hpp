// The configuration: YAML read through yaml-cpp into validated, typed structures. Nothing
// downstream reads raw YAML. Validation reports every error at once, each naming the file, line
// and column, the key, the value and what is allowed.
//
// Lengths of the section are in the configuration's length unit (m or ft); stage offset and zero
// flow are in the site's stage units. Relative paths (database, sources, log file) are resolved
// against the directory of the configuration file. config/reference.yaml documents every key.
//
// Bounds chosen here (lib/src/config/*_keys.cpp): Manning's n from 0.008 to 0.25; energy slope
// greater than 0 and at most 0.5; widths, diameters and heights greater than 0; side slopes at
// least 0, not both 0 for a triangular section; at most max_subsections - 1 breaks.
#pragma once

#include <cstdint>
#include <expected>
#include <filesystem>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "stagewell/channel.hpp"
#include "stagewell/flags.hpp"
#include "stagewell/section.hpp"
#include "stagewell/uncertainty.hpp"
#include "stagewell/units.hpp"

namespace stagewell {

// The Manning's n a configuration accepts (see the top of this file).
inline constexpr double kMinRoughness = 0.008;
inline constexpr double kMaxRoughness = 0.25;

struct StageSpec {
  units::Length units = units::Length::m;
  double offset = 0.0;     // stage units: added to every reading (sensor offset)
  double zero_flow = 0.0;  // stage units: stage of zero flow
};

// Checks on every reading (see docs/checks-and-alarms.md, "Checks on each reading"). Durations in
// seconds. A check whose threshold is unset is off.
struct ChecksSpec {
  std::optional<double> min_stage;  // stage units: below -> out_of_range
  std::optional<double> max_stage;  // stage units: above -> out_of_range
  std::optional<double> spike;      // stage units: a jump at least this large that comes back
  int spike_window = 3;             // readings within which a spike must come back
  std::optional<double> max_rate;   // stage units per hour: faster -> unsteady
  double flatline_s = 6 * 3600.0;   // the same stage for longer -> flatline; 0 = off
  double max_gap_s = 3600.0;        // longer since the previous reading -> gap
  double max_clock_skew_s = 300.0;  // further ahead of the clock -> future
  // |Q_J / Q - 1| above this (a fraction; the key is a percentage) -> unsteady, with Q_J the Jones
  // estimate (uncertainty.hpp); 0 = off. Judged with the discharge, not by SiteChecker.
  double unsteady = 0.05;

  friend bool operator==(const ChecksSpec&, const ChecksSpec&) = default;
};

// Alarms on a site (docs/checks-and-alarms.md, "Alarms"); every alarm is off unless its threshold
// is set. A threshold alarm raises when its condition has held for `hold_s` (judged by reading
// times) and clears only once the value is back past threshold ± hysteresis, so that a value
// hovering at the threshold does not raise and clear over and over.
struct ThresholdAlarmSpec {
  std::optional<double> threshold;  // off when empty
  double hysteresis = 0.0;          // same unit as threshold, >= 0
  double hold_s = 0.0;              // seconds the condition must hold before raising
};

struct AlarmsSpec {
  ThresholdAlarmSpec low_flow;      // discharge below, m^3/s or ft^3/s (configuration's units)
  ThresholdAlarmSpec high_flow;     // discharge above, m^3/s or ft^3/s
  std::optional<double> stale_s;    // no new reading for this long (by the clock), seconds
  ThresholdAlarmSpec rising;        // stage rising faster than this, stage units per hour
  double rising_window_s = 3600.0;  // rate of rise = change of stage across this window

  bool any() const {
    return low_flow.threshold || high_flow.threshold || stale_s || rising.threshold;
  }
};
// A correction of raw stage over [from_ms, to_ms) (start included, end not), added before the
// stage becomes depth; the stored raw stage is never changed. Stage units.
struct StageCorrection {
  std::int64_t from_ms = 0;  // ms since the epoch, UTC
  std::int64_t to_ms = 0;    // ms since the epoch, UTC; greater than from_ms
  double offset = 0.0;       // stage units, added throughout the period
  double drift = 0.0;        // stage units added at to_ms, growing linearly from 0 at from_ms
  int line = 0;              // where it is written, for messages

  // Stage units to add to a raw reading at `time_ms`: offset + drift * (t - from) / (to - from).
  // REQUIRES: from_ms <= time_ms < to_ms.
  double at(std::int64_t time_ms) const;
};

struct SiteChange;

// Where a site is, in decimal degrees (WGS 84, as a hand-held receiver gives it).
struct SiteLocation {
  double latitude = 0.0;   // -90 to 90, north positive
  double longitude = 0.0;  // -180 to 180, east positive
};

struct SiteConfig {
  std::string id;
  std::string name;  // the id when not given
  // Descriptive only (the site_details view, exports): not part of the configuration version, so
  // editing them recomputes nothing.
  std::optional<SiteLocation> location;
  std::optional<std::string> datum;  // what the stage's zero is levelled to, free text
  SectionSpec section;
  std::vector<double> roughness;  // Manning's n, one per subsection (a single n is repeated)
  double slope = 0.0;             // energy slope, length per length
  StageSpec stage;
  ChecksSpec checks;
  UncertaintySpec uncertainty;  // standard uncertainties of n, slope and stage (uncertainty.hpp)
  AlarmsSpec alarms;
  int line = 0;  // where the site starts in the file, for messages
  // History (docs/configuration.md, "History and corrections"): the keys above hold before the
  // first change; each change, in time order, overrides keys from its `from` on. Corrections never
  // overlap and are sorted by time. In the SiteConfig of a change both lists are empty.
  std::vector<SiteChange> changes;
  std::vector<StageCorrection> corrections;

  // The keys in force at `time_ms`: this site, or the SiteConfig of the latest change at or before.
  const SiteConfig& version_at(std::int64_t time_ms) const;
  // The correction whose period holds `time_ms`; nullptr when none does.
  const StageCorrection* correction_at(std::int64_t time_ms) const;

  // Depth (config length unit) for a raw stage reading (stage units):
  // (stage + offset - zero_flow) converted to the configuration's length unit.
  double depth_for_stage(double stage, units::System system) const;
  // The inverse: the stage reading (stage units) that gives `depth`.
  double stage_for_depth(double depth, units::System system) const;
};

// The site as it is from `from_ms` on (each change applied on top of the one before it).
struct SiteChange {
  std::int64_t from_ms = 0;  // ms since the epoch, UTC
  int line = 0;              // where the change is written
  SiteConfig site;           // every key resolved; its changes and corrections are empty
};

// Which header names hold the fields of a CSV reading.
struct ColumnNames {
  std::string site = "site";
  std::string time = "time";
  std::string stage = "stage";
};

// A `type: tcp` source: a listener taking CSV lines from gateways and loggers over TCP, each
// acknowledged once stored (protocol: docs/tcp-protocol.md, "Readings over TCP"). Limits bound what
// one client can make the service hold.
struct TcpSpec {
  std::string address = "127.0.0.1";  // IP address to listen on, as written (IPv4 or IPv6)
  int port = 7207;                    // TCP port, 1 to 65535
  bool loopback = true;               // address is 127.0.0.0/8 or ::1
  std::optional<std::string> secret;  // clients send it first; required unless loopback
  std::size_t max_line_bytes = 4096;  // longest line, bytes, without its line ending
  int max_clients = 64;               // connections at once; more are refused
  double idle_timeout_s = 300.0;      // nothing moving either way this long: closed
  double auth_timeout_s = 10.0;       // no `auth` line this long after connecting: refused
  std::size_t max_reply_bytes =
      65536;  // replies a client leaves unread, bytes, before it is closed
};

// A place readings come from.
struct SourceSpec {
  enum class Type { directory, tail, tcp };
  Type type = Type::directory;
  TcpSpec tcp;                      // type tcp only (path is then empty)
  std::filesystem::path path;       // absolute after loading
  std::optional<std::string> site;  // every reading belongs to this site (no site column)
  ColumnNames columns;
  std::optional<std::string> time_zone;  // for timestamps written without an offset
  // The unit the stages are written in, when not the site's (`sites[].stage.units`): each stage is
  // converted to the site's stage units as it is read. Empty: the site's.
  std::optional<units::Length> stage_units;
  int line = 0;
};

struct LogSpec {
  std::optional<std::filesystem::path> file;  // also log to this file (reopened on rotation)
  std::string level = "info";                 // trace | debug | info | warn | error
};

// How the daily figures (docs/daily-and-statistics.md) treat flagged readings, and where the water
// year starts. A flag in neither set is included: its reading's discharge is used as is.
//   excluded  the reading is dropped and the time around it, back to the previous and on to the
//             next used reading, counts as missing.
//   bridged   the reading is dropped and its neighbours are joined across it (when they are no
//             more than max_gap apart).
// A reading with two flags takes the stronger treatment: excluded, then bridged, then included.
// A reading without discharge (out_of_range) is never used: it is excluded unless bridged.
struct DailySpec {
  int water_year_start_month = 10;  // 1 = January ... 12 = December; October by default
  Flags excluded = Flag::out_of_range;
  Flags bridged = Flag::spike;
};

// `http:` the status page, JSON API and metrics served by the service (docs/http-api.md, "HTTP: the
// status page, API and metrics"). Read-only: GET and HEAD. Absent: no server.
struct HttpSpec {
  std::string address = "127.0.0.1";    // IP address to listen on, as written (IPv4 or IPv6)
  int port = 8207;                      // TCP port, 1 to 65535
  bool loopback = true;                 // 127.0.0.0/8 or ::1; otherwise a warning is logged
  int max_connections = 32;             // connections at once; at the cap the one idle longest
                                        // is closed for a new one, or (none idle) 503
  int max_connections_per_address = 8;  // from one client address at once; more: 429
  double request_timeout_s = 10.0;      // idle: a connection waits this long for a request to begin
  double header_timeout_s = 2.0;        // begun: its header must arrive whole within this
};

// `warehouse:` where the service ships its record: one PostgreSQL database that several services
// (plants) feed (docs/warehouse.md). Absent: nothing is shipped.
struct WarehouseSpec {
  std::string postgresql;  // a libpq connection string (keyword=value or URI), no password in it
  std::optional<std::filesystem::path> password_file;  // absolute; its first line is the password
  std::string schema = "stagewell";  // the PostgreSQL schema: [a-z_][a-z0-9_]{0,62}
  std::string plant;                 // this service's name in the warehouse; the host name if unset
};

struct Config {
  std::filesystem::path file;  // the file it was read from (absolute), or parse_config's name
  units::System units = units::System::metric;
  std::filesystem::path database;  // absolute after loading
  std::string timezone;            // IANA name or fixed offset "+HH:MM"/"-HH:MM"/"Z"; default "UTC"
  std::vector<SiteConfig> sites;
  std::vector<SourceSpec> sources;
  LogSpec log;
  DailySpec daily;
  std::optional<HttpSpec> http;  // http: empty when `http:` is not written
  std::optional<WarehouseSpec> warehouse;  // empty when `warehouse:` is not written

  const SiteConfig* find_site(std::string_view id) const;  // nullptr when unknown
};

// "90s", "15m", "2h", "1d" (also "1h30m", "1.5h") -> seconds; nullopt when malformed or negative.
// Units d, h, m, s, each at most once, largest first; "0" needs no unit.
std::optional<double> parse_duration(std::string_view text);

// The offset east of UTC, in seconds, of a fixed-offset time zone as a configuration writes it:
// "+HH:MM", "-HH:MM" (from -12:00 to +14:00) or "Z". nullopt for anything else, such as an IANA
// name ("America/Denver", "UTC"), which cctz::load_time_zone() opens.
std::optional<int> fixed_utc_offset_s(std::string_view zone);

// One validation error.
struct ConfigError {
  std::string file;
  int line = 0;         // 1-based; 0 when unknown
  int column = 0;       // 1-based; 0 when unknown
  std::string key;      // dotted path, e.g. "sites[1].section.width" (0-based list indices)
  std::string value;    // the offending value as written, may be empty
  std::string message;  // what is wrong and what is allowed

  // "demo.yaml:12:14: sites[1].section.width = -2: must be greater than 0"
  std::string to_string() const;
};

using ConfigResult = std::expected<Config, std::vector<ConfigError>>;

// The most a configuration may hold, in bytes: a real one is a few kilobytes; anything larger is
// refused before it is parsed (a wrong file, /dev/zero), so reading one is bounded in time and
// memory.
inline constexpr std::size_t kMaxConfigBytes = 1024 * 1024;

ConfigResult load_config(const std::filesystem::path& file);

// Where the programs find their configuration when the command line names none
// (docs/configuration.md, "Where the configuration is found"):
//   stagewelld  the system file only;
//   stagewell   $STAGEWELL_CONFIG when set (and then only it), else the first that exists of
//               $XDG_CONFIG_HOME/stagewell/config.yaml ($HOME/.config when XDG_CONFIG_HOME is
//               unset, empty or relative: the XDG Base Directory Specification) and the system
//               file.
inline constexpr std::string_view kSystemConfigFile = "/etc/stagewell/stagewell.yaml";
// A variable of the environment; nullopt when unset.
using EnvironmentLookup = std::function<std::optional<std::string>(const char* name)>;
// The process's own environment.
std::optional<std::string> process_environment(const char* name);
struct ConfigCandidates {
  std::vector<std::filesystem::path> paths;  // in order; the first that exists is used
  bool from_variable = false;                // the one path is $STAGEWELL_CONFIG's
};
ConfigCandidates user_config_candidates(const EnvironmentLookup& environment);
// `file_name` is used in messages; relative paths resolve against `base_dir`.
ConfigResult parse_config(std::string_view yaml_text, std::string file_name,
                          const std::filesystem::path& base_dir);

// The channel of a validated site. REQUIRES: the site came from a successful load. nullptr only
// if make_section() refuses a section that validation accepted (the two disagree: a bug).
std::shared_ptr<const Channel> make_channel(const SiteConfig& site, units::System system);

}  // namespace stagewell
