#include "stagewell/site_history.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>

#include "site_json.hpp"
#include "stagewell/rating.hpp"
#include "supercritical.hpp"

namespace stagewell {
namespace {

constexpr std::int64_t kStart = std::numeric_limits<std::int64_t>::min();
constexpr std::int64_t kEnd = std::numeric_limits<std::int64_t>::max();

// The opposite of the out_of_range check (checks.hpp): min_stage <= stage <= max_stage.
bool within_stage_range(const ChecksSpec& checks, double stage) {
  return !(checks.min_stage && stage < *checks.min_stage) &&
         !(checks.max_stage && stage > *checks.max_stage);
}

// How this segment's version turns stage into depth (stored with the version: see DepthTerms).
DepthTerms depth_terms(const SiteConfig& keys, const StageCorrection* correction,
                       units::System system) {
  DepthTerms terms{.stage_offset = keys.stage.offset,
                   .zero_flow = keys.stage.zero_flow,
                   .stage_unit_m = units::to_m(keys.stage.units),
                   .length_unit_m = units::length_to_m(system),
                   .correction = std::nullopt};
  if (correction != nullptr) {
    terms.correction = DepthTerms::Correction{.from_ms = correction->from_ms,
                                              .to_ms = correction->to_ms,
                                              .offset = correction->offset,
                                              .drift = correction->drift};
  }
  return terms;
}

}  // namespace

struct SiteHistory::Hydraulics {
  std::shared_ptr<const Channel> channel;
  std::unique_ptr<RatingTable> rating;
  std::unique_ptr<SupercriticalDepths> supercritical;
  double top_depth = 0.0;  // configuration length unit
};

SiteHistory::SiteHistory(SiteHistory&&) noexcept = default;
SiteHistory& SiteHistory::operator=(SiteHistory&&) noexcept = default;
SiteHistory::~SiteHistory() = default;

Result<SiteHistory> SiteHistory::open(Store& store, SiteKey key, const SiteConfig& site,
                                      units::System system, std::int64_t now_ms) {
  SiteHistory history;
  history.system_ = system;
  // Every time at which the keys or the correction may change.
  std::vector<std::int64_t> cuts{kStart};
  for (const auto& change : site.changes) cuts.push_back(change.from_ms);
  for (const auto& correction : site.corrections) {
    cuts.push_back(correction.from_ms);
    cuts.push_back(correction.to_ms);
  }
  std::sort(cuts.begin(), cuts.end());
  cuts.erase(std::unique(cuts.begin(), cuts.end()), cuts.end());

  std::map<const SiteConfig*, std::size_t> built;
  for (std::size_t i = 0; i < cuts.size(); ++i) {
    HistorySegment segment;
    segment.from_ms = cuts[i];
    segment.to_ms = i + 1 < cuts.size() ? cuts[i + 1] : kEnd;
    segment.keys = &site.version_at(segment.from_ms);
    segment.correction = site.correction_at(segment.from_ms);
    auto [found, added] = built.emplace(segment.keys, history.hydraulics_.size());
    if (added) {
      auto hydraulics = std::make_unique<Hydraulics>();
      hydraulics->channel = make_channel(*segment.keys, system);
      if (!hydraulics->channel) {
        return fail(ErrorKind::invalid_argument,
                    "site " + site.id + ": a section of its history cannot be built");
      }
      hydraulics->rating = std::make_unique<RatingTable>(hydraulics->channel);
      hydraulics->top_depth = hydraulics->channel->section().top_depth();
      hydraulics->supercritical =
          std::make_unique<SupercriticalDepths>(*hydraulics->channel, hydraulics->top_depth);
      history.hydraulics_.push_back(std::move(hydraulics));
    }
    segment.hydraulics = found->second;
    auto version =
        store.versions().record(key, site_config_json(*segment.keys, system, segment.correction),
                                now_ms, depth_terms(*segment.keys, segment.correction, system));
    if (!version) return std::unexpected(version.error());
    segment.version = *version;
    history.segments_.push_back(segment);
  }
  return history;
}

const HistorySegment& SiteHistory::segment_at(std::int64_t time_ms) const {
  if (time_ms >= segments_.back().from_ms) return segments_.back();
  const auto after = std::upper_bound(
      segments_.begin(), segments_.end(), time_ms,
      [](std::int64_t time, const HistorySegment& segment) { return time < segment.from_ms; });
  return *std::prev(after);  // the first segment starts at INT64_MIN: `after` is never begin()
}

double SiteHistory::depth(std::int64_t time_ms, double stage) const {
  const HistorySegment& segment = segment_at(time_ms);
  const double correction = segment.correction ? segment.correction->at(time_ms) : 0.0;
  return segment.keys->depth_for_stage(stage + correction, system_);
}

bool SiteHistory::unusable(std::int64_t time_ms, double stage) const {
  // Only a reading inside the stage range gets a discharge, and below the section's top the
  // rating's discharges are finite.
  const HistorySegment& segment = segment_at(time_ms);
  const Hydraulics& hydraulics = *hydraulics_[segment.hydraulics];
  const double depth = this->depth(time_ms, stage);
  return !std::isfinite(depth) ||
         (within_stage_range(segment.keys->checks, stage) && depth > hydraulics.top_depth &&
          !std::isfinite(hydraulics.channel->discharge(depth)));
}

ComputedReading SiteHistory::compute(std::int64_t time_ms, double stage, Flags checked,
                                     const std::optional<PastReading>& previous) const {
  const HistorySegment& segment = segment_at(time_ms);
  const Hydraulics& hydraulics = *hydraulics_[segment.hydraulics];
  ComputedReading out;
  out.config = segment.version;
  out.flags = checked;
  out.depth = depth(time_ms, stage);
  if (out.flags.has(Flag::out_of_range)) {
    out.discharge.reset();  // an implausible stage gives no discharge; the reading is still kept
  } else if (out.depth <= 0.0) {
    out.flags.set(Flag::below_zero_flow);
    out.discharge = 0.0;
  } else if (out.depth > hydraulics.top_depth) {
    // Rare: the direct formula (vertical walls above an open section, a full pipe above a crown).
    const HydraulicState state = hydraulics.channel->at_depth(out.depth);
    out.flags |= state.flags;
    out.discharge = state.discharge;
  } else {
    out.discharge = hydraulics.rating->discharge(out.depth);
    if (hydraulics.supercritical->contains(out.depth)) out.flags.set(Flag::supercritical);
  }
  if (out.discharge && *out.discharge > 0.0) {
    const SiteConfig& keys = *segment.keys;
    // Relative to the stored discharge; the top width only where a Jones estimate is formed.
    StageResponse response;
    response.discharge = *out.discharge;
    response.dq_dh = rating_slope(*hydraulics.channel, out.depth);
    if (previous) response.top_width = hydraulics.channel->section().geometry(out.depth).top_width;
    const double stage_to_length = units::to_m(keys.stage.units) / units::length_to_m(system_);
    if (const auto band = relative_band(response, keys.uncertainty, stage_to_length)) {
      out.band = band_from_bp(band_to_bp(*band));  // as stored (uncertainty.hpp)
    }
    if (previous) {
      const double seconds = static_cast<double>(time_ms - previous->time_ms) / 1000.0;
      const double rate = (out.depth - depth(previous->time_ms, previous->stage)) / seconds;
      if (const auto jones = jones_discharge(response, keys.slope, rate)) {
        // Judged before the estimate is rounded to a basis point for storing.
        if (keys.checks.unsteady > 0.0 &&
            std::fabs(*jones / *out.discharge - 1.0) > keys.checks.unsteady) {
          out.flags.set(Flag::unsteady);
        }
        out.discharge_jones = jones_from_bp(*out.discharge, jones_to_bp(*out.discharge, *jones));
      }
    }
  }
  return out;
}

}  // namespace stagewell
