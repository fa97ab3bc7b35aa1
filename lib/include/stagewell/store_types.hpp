// The values the store and its tables exchange with the rest of the program: keys, a stored
// reading, what an insert found, a reject, a source's progress.
//
// Times are int64 milliseconds since the Unix epoch, UTC (names end in _ms).
#pragma once

#include <compare>
#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>

#include "stagewell/flags.hpp"

namespace stagewell {

class Store;
class WriteBatch;
namespace store_detail {
struct Core;  // what a Store holds: its connection and state (lib/src/store/store_core.hpp)

// What every table's handle is: a pointer to its store's state, handed out by the Store
// (Store::readings() etc.). A handle does not outlive its store.
class TableHandle {
 protected:
  friend class stagewell::Store;
  explicit TableHandle(Core* core) : core_(core) {}
  Core* core_;
};
}  // namespace store_detail

// A site's key in the database (sites.site_key).
struct SiteKey {
  std::int64_t value = 0;
  friend auto operator<=>(SiteKey, SiteKey) = default;
};

// A recorded configuration version (config_versions.config_id).
struct ConfigVersionId {
  std::int64_t value = 0;
  friend auto operator<=>(ConfigVersionId, ConfigVersionId) = default;
};

// What turns a reading's stage into its depth under one configuration version (the version's
// row in `version_depth_terms`): depth = ((stage + correction) + stage_offset - zero_flow)
// × stage_unit_m ÷ length_unit_m, correction = offset + drift × (time - from) ÷ (to - from) when
// the version has a stage correction, else 0 — the same operations, in the same order, as
// SiteHistory::depth. Depth is not stored with each reading: reads compute it from these.
struct DepthTerms {
  double stage_offset = 0.0;   // site's stage units
  double zero_flow = 0.0;      // site's stage units
  double stage_unit_m = 1.0;   // metres in one stage unit
  double length_unit_m = 1.0;  // metres in one depth unit (m: 1, ft: 0.3048)
  struct Correction {
    std::int64_t from_ms = 0, to_ms = 0;
    double offset = 0.0, drift = 0.0;  // site's stage units
  };
  std::optional<Correction> correction;
};

// One reading as stored.
struct StoredReading {
  SiteKey site;
  std::int64_t time_ms = 0;         // ms since the Unix epoch, UTC
  double stage = 0.0;               // the raw reading, site's stage units, exactly as received
  double depth = 0.0;               // configuration length unit (m or ft); read, never written:
                                    // the version's DepthTerms give it
  std::optional<double> discharge;  // m^3/s or ft^3/s; empty when out_of_range
  Flags flags;
  ConfigVersionId config;  // the version that computed depth, discharge and flags
  // The discharge's relative expanded uncertainty (a fraction) and its Jones estimate (m^3/s or
  // ft^3/s), uncertainty.hpp; empty where none.
  std::optional<double> band = std::nullopt;
  std::optional<double> discharge_jones = std::nullopt;
};

// What a reading's stored values are, computed from its raw stage (site_history.hpp); what a
// recomputation writes over a stored reading (ReadingsTable::rewrite).
struct ComputedReading {
  double depth = 0.0;               // configuration length unit (m or ft)
  std::optional<double> discharge;  // m^3/s or ft^3/s; empty when out_of_range
  Flags flags;                      // the checks' flags plus the hydraulic ones
  ConfigVersionId config;
  // The relative expanded uncertainty (k = 2) of discharge and the Jones estimate (m^3/s or
  // ft^3/s), uncertainty.hpp; empty where none.
  std::optional<double> band = std::nullopt;
  std::optional<double> discharge_jones = std::nullopt;
};

enum class InsertOutcome {
  stored,     // a new reading
  duplicate,  // the same site, time and stage is already stored: nothing changed (a re-read)
  conflict,   // the same site and time is stored with a different stage: nothing replaced; the
              // caller records the new line as a reject
};

struct InsertResult {
  InsertOutcome outcome = InsertOutcome::stored;
  std::optional<double> stored_stage;  // the stage already stored (duplicate and conflict)
};

// A line of input that could not be used.
struct Reject {
  std::string_view source;    // a file path or a socket peer
  std::string_view position;  // where in the source: "gauge.csv:123", "line 17"
  std::string_view raw;       // the line; only its first max_reject_raw_bytes are kept
  std::string_view reason;    // a sentence for a person
  std::int64_t received_ms = 0;
};

// Longest raw line kept in a reject (bytes). Longer lines are cut at a UTF-8 character boundary
// at or below this; the table keeps the full length (rejected_lines.raw_bytes).
inline constexpr std::size_t max_reject_raw_bytes = 4096;

// How far a source has been read.
struct IngestProgress {
  // Which file the offset belongs to, e.g. "2049:1311" (dev:inode); a FileReader's also holds
  // fingerprints of the bytes before the offset and of its settings (file_sources.hpp).
  std::string file_identity;
  std::int64_t byte_offset = 0;  // bytes consumed
  std::int64_t updated_ms = 0;   // when it was written
};

// A source and its progress (ProgressTable::latest).
struct SourceProgress {
  std::string source;
  IngestProgress progress;
};

}  // namespace stagewell
