#include "stagewell/gaugings.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "stagewell/timestamp.hpp"
#include "stagewell/uncertainty.hpp"

namespace stagewell {

std::size_t main_subsection(const SectionSpec& section) {
  if (section.shape != Shape::surveyed || section.breaks.empty() || section.points.empty()) {
    return 0;
  }
  // The middle of the first stretch of bed at the lowest elevation: a flat channel bottom often
  // starts and ends on the breaks that bound the channel, so its ends alone would not say which
  // side of a break it lies on.
  const auto& points = section.points;
  const auto lowest =
      std::min_element(points.begin(), points.end(),
                       [](const auto& a, const auto& b) { return a.second < b.second; });
  auto last = lowest;
  while (std::next(last) != points.end() && std::next(last)->second == lowest->second) ++last;
  const double station = 0.5 * (lowest->first + last->first);
  // Breaks lie strictly inside the section, in increasing order: those before the station count
  // the subsections to its left (a station on a break belongs to the subsection left of it).
  return static_cast<std::size_t>(std::count_if(section.breaks.begin(), section.breaks.end(),
                                                [station](double at) { return at < station; }));
}

double main_roughness(const SiteConfig& keys) {
  const std::size_t main = main_subsection(keys.section);
  return keys.roughness.at(std::min(main, keys.roughness.size() - 1));
}

GaugingEvaluation evaluate_gauging(const SiteHistory& history, std::int64_t time_ms, double stage) {
  const HistorySegment& segment = history.segment_at(time_ms);
  // The checks' stage range is where the configuration says a stage is plausible: outside it the
  // readings get no discharge, and neither does a gauging.
  Flags checked;
  const ChecksSpec& checks = segment.keys->checks;
  if ((checks.min_stage && stage < *checks.min_stage) ||
      (checks.max_stage && stage > *checks.max_stage)) {
    checked.set(Flag::out_of_range);
  }
  const ComputedReading computed = history.compute(time_ms, stage, checked);
  GaugingEvaluation out;
  out.flags = computed.flags;
  out.stored.config = computed.config;
  out.stored.roughness = main_roughness(*segment.keys);
  if (computed.discharge && std::isfinite(*computed.discharge)) {
    out.stored.computed = computed.discharge;
  }
  return out;
}

std::optional<std::string> calibration_exclusion(const GaugingRecord& record, Flags flags) {
  if (flags.has(Flag::out_of_range)) {
    return "out_of_range: the stage is outside the site's min_stage..max_stage";
  }
  if (flags.has(Flag::above_section)) return "above_section: the stage is above the section's top";
  if (flags.has(Flag::surcharged)) return "surcharged: the pipe is flowing full";
  if (flags.has(Flag::below_zero_flow))
    return "below_zero_flow: the stage is at or below zero flow";
  if (!record.computed || !(*record.computed > 0.0)) return "no computed discharge above 0";
  if (!(record.measured > 0.0)) return "the measured discharge is 0";
  return std::nullopt;
}

Result<std::optional<double>> interpolated_stage(Store& store, SiteKey site, std::int64_t time_ms,
                                                 std::int64_t max_gap_ms, std::string& why) {
  auto readings = store.readings();
  auto before = readings.recent(site, time_ms, 1);
  if (!before) return std::unexpected(before.error());
  if (before->empty() || before->back().time_ms < time_ms - max_gap_ms) {
    why = fmt::format(
        "no stage given and no stored reading in the {} s before it to interpolate from",
        max_gap_ms / 1000);
    return std::optional<double>{};
  }
  const StoredReading& left = before->back();
  if (left.time_ms == time_ms) return std::optional<double>(left.stage);
  std::vector<StoredReading> after;
  if (auto found = readings.range(site, time_ms, time_ms + max_gap_ms, 1, after); !found) {
    return std::unexpected(found.error());
  }
  if (after.empty()) {
    why = fmt::format("no stage given and no stored reading in the {} s after it to interpolate to",
                      max_gap_ms / 1000);
    return std::optional<double>{};
  }
  const StoredReading& right = after.front();
  const double fraction = static_cast<double>(time_ms - left.time_ms) /
                          static_cast<double>(right.time_ms - left.time_ms);
  return std::optional<double>(left.stage + (right.stage - left.stage) * fraction);
}

Result<std::vector<EvaluatedGauging>> refresh_gaugings(Store& store, const SiteHistory& history,
                                                       SiteKey site, std::int64_t from_ms,
                                                       std::int64_t to_ms) {
  auto stored = store.gaugings().range(site, from_ms, to_ms);
  if (!stored) return std::unexpected(stored.error());
  std::vector<EvaluatedGauging> out;
  out.reserve(stored->size());
  std::optional<WriteBatch> batch;
  for (auto& record : *stored) {
    const GaugingEvaluation evaluation = evaluate_gauging(history, record.time_ms, record.stage);
    const GaugingComputed was{record.computed, record.roughness, record.config};
    if (!(was == evaluation.stored)) {
      if (!batch) {
        auto begun = store.begin();
        if (!begun) return std::unexpected(begun.error());
        batch.emplace(std::move(*begun));
      }
      if (auto set = store.gaugings().set_computed(*batch, site, record.time_ms, evaluation.stored);
          !set) {
        return std::unexpected(set.error());
      }
      record.computed = evaluation.stored.computed;
      record.roughness = evaluation.stored.roughness;
      record.config = evaluation.stored.config;
    }
    out.push_back({std::move(record), evaluation.flags});
  }
  if (batch) {
    if (auto committed = batch->commit(); !committed) return std::unexpected(committed.error());
  }
  return out;
}

Result<std::vector<GaugingImport>> import_gaugings(Store& store, const SiteHistory& history,
                                                   SiteKey site, std::span<const GaugingLine> lines,
                                                   double default_uncertainty,
                                                   std::int64_t now_ms) {
  std::vector<GaugingImport> out;
  auto batch = store.begin();
  if (!batch) return std::unexpected(batch.error());
  for (const GaugingLine& line : lines) {
    GaugingImport result{.line_number = line.line_number};
    std::optional<double> stage = line.stage;
    if (!stage) {
      const double max_gap_s = history.segment_at(line.time_ms).keys->checks.max_gap_s;
      const auto max_gap_ms = static_cast<std::int64_t>(std::llround(max_gap_s * 1000.0));
      std::string why;
      auto found = interpolated_stage(store, site, line.time_ms, max_gap_ms, why);
      if (!found) return std::unexpected(found.error());
      if (!*found) {
        result.refused = why;
        out.push_back(std::move(result));
        continue;
      }
      stage = *found;
      result.stage_interpolated = true;
    }
    auto existing = store.gaugings().range(site, line.time_ms, line.time_ms);
    if (!existing) return std::unexpected(existing.error());
    result.replaced = !existing->empty();
    const GaugingEvaluation evaluation = evaluate_gauging(history, line.time_ms, *stage);
    GaugingRecord record{.site = site,
                         .time_ms = line.time_ms,
                         .stage = *stage,
                         .stage_interpolated = result.stage_interpolated,
                         .measured = line.discharge,
                         .uncertainty = line.uncertainty.value_or(default_uncertainty),
                         .method = line.method,
                         .note = line.note,
                         .computed = evaluation.stored.computed,
                         .roughness = evaluation.stored.roughness,
                         .config = evaluation.stored.config,
                         .imported_ms = now_ms};
    if (auto put = store.gaugings().put(*batch, record); !put) return std::unexpected(put.error());
    out.push_back(std::move(result));
  }
  if (auto committed = batch->commit(); !committed) return std::unexpected(committed.error());
  return out;
}

std::vector<plot::RatingCurvePoint> rating_curve(const SiteHistory& history, units::System system,
                                                 std::int64_t time_ms, std::size_t count) {
  const HistorySegment& segment = history.segment_at(time_ms);
  const SiteConfig& keys = *segment.keys;
  const double correction = segment.correction ? segment.correction->at(time_ms) : 0.0;
  const auto channel = make_channel(keys, system);
  // Raw stages: the stage that, corrected, reads the depth.
  double low = keys.stage_for_depth(0.0, system) - correction;
  double high = keys.stage_for_depth(channel->section().top_depth(), system) - correction;
  if (keys.checks.min_stage) low = std::max(low, *keys.checks.min_stage);
  if (keys.checks.max_stage) high = std::min(high, *keys.checks.max_stage);
  if (!(high > low)) high = low + 1.0;
  count = std::max<std::size_t>(count, 2);
  std::vector<plot::RatingCurvePoint> out;
  for (std::size_t i = 0; i < count; ++i) {
    const double stage =
        low + (high - low) * static_cast<double>(i) / static_cast<double>(count - 1);
    const ComputedReading computed = history.compute(time_ms, stage, Flags{});
    plot::RatingCurvePoint point{.stage = stage, .discharge = computed.discharge.value_or(0.0)};
    // The band as the readings get it (uncertainty.hpp): none at zero depth, where it is 0 wide.
    std::optional<double> band;
    if (computed.depth > 0.0) {
      band = relative_band(stage_response(*channel, computed.depth), keys.uncertainty,
                           units::to_m(keys.stage.units) / units::length_to_m(system));
    }
    point.low = band_low(computed.discharge, band);
    point.high = band_high(computed.discharge, band);
    out.push_back(point);
  }
  return out;
}

}  // namespace stagewell
