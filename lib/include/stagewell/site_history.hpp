// A site's timeline cut into segments within which the keys in force (the site's, or a change's)
// and the stage correction are both constant. Each segment has its recorded configuration version
// (config_versions row: the keys and the correction as JSON), so that a stored reading whose
// config_id differs from its segment's was computed with something else and needs recomputing.
//
// compute() is the one place a raw stage becomes depth, discharge and hydraulic flags: the ingest
// path and the recomputation both use it, so both give the same answer for the same reading.
//
// The checks (checks.hpp) run on the raw stage as received; a correction changes depth and
// discharge only.
//
// Not thread-safe. REQUIRES: the SiteConfig it was opened with outlives it.
#pragma once

#include <cstdint>
#include <memory>
#include <optional>
#include <span>
#include <vector>

#include "stagewell/checks.hpp"
#include "stagewell/config.hpp"
#include "stagewell/flags.hpp"
#include "stagewell/result.hpp"
#include "stagewell/store.hpp"

namespace stagewell {

struct HistorySegment {
  std::int64_t from_ms = 0;                     // included; INT64_MIN for the first segment
  std::int64_t to_ms = 0;                       // excluded; INT64_MAX for the last
  const SiteConfig* keys = nullptr;             // the keys in force
  const StageCorrection* correction = nullptr;  // nullptr when none
  ConfigVersionId version;                      // its config_versions row
  std::size_t hydraulics = 0;                   // internal: which channel and rating
};

// ComputedReading, what a reading's stored values are, is the store's (store_types.hpp).

class SiteHistory {
 public:
  // Records each segment's configuration version (REQUIRES: no write batch open on `store`) and
  // builds one channel and rating table per distinct set of keys.
  static Result<SiteHistory> open(Store& store, SiteKey key, const SiteConfig& site,
                                  units::System system, std::int64_t now_ms);
  SiteHistory(SiteHistory&&) noexcept;
  SiteHistory& operator=(SiteHistory&&) noexcept;
  ~SiteHistory();

  // The segment holding `time_ms` (the last one, for the common case of a live reading).
  const HistorySegment& segment_at(std::int64_t time_ms) const;
  std::span<const HistorySegment> segments() const { return segments_; }

  // Depth (configuration length unit) of a raw stage at `time_ms`: the correction in force is
  // added to the stage, then the keys' offset and zero flow apply (SiteConfig::depth_for_stage).
  double depth(std::int64_t time_ms, double stage) const;
  // True when the stage's depth, or the discharge it would get, is not a finite number (such a
  // reading cannot be stored).
  bool unusable(std::int64_t time_ms, double stage) const;
  // Depth, discharge, band and flags of a reading whose checks gave `checked`. With `previous`
  // (CheckResult::previous) also the Jones estimate, and the flag unsteady where it differs from
  // the discharge by more than the checks' `unsteady` share.
  ComputedReading compute(std::int64_t time_ms, double stage, Flags checked,
                          const std::optional<PastReading>& previous = std::nullopt) const;

 private:
  struct Hydraulics;
  SiteHistory() = default;

  units::System system_ = units::System::metric;
  std::vector<HistorySegment> segments_;
  std::vector<std::unique_ptr<Hydraulics>> hydraulics_;
};

}  // namespace stagewell
