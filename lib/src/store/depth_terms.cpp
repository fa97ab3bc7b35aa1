#include "store/depth_terms.hpp"

#include <fmt/format.h>

#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "stagewell/units.hpp"
#include "store/rows.hpp"

namespace stagewell::store_detail {
namespace {

// The terms from a version's JSON text, as the pipeline writes it (site_config_json): "units" the
// unit system, "stage" {units, offset, zero_flow}, and "correction" {from_ms, to_ms, offset, drift}
// when the version has one. nlohmann reads numbers with strtod: the doubles the program had.
Result<DepthTerms> parse_terms(std::int64_t config_id, std::string_view config_json) {
  const auto bad = [&](std::string_view what) {
    return fail(ErrorKind::database,
                fmt::format("configuration version {} has {}; its depths cannot be computed",
                            config_id, what));
  };
  const auto json = nlohmann::json::parse(config_json, nullptr, /*allow_exceptions=*/false);
  if (json.is_discarded() || !json.is_object()) return bad("a JSON text that does not parse");
  try {
    const auto system = units::parse_system(json.at("units").get<std::string>());
    const auto& stage = json.at("stage");
    const auto unit = units::parse_length(stage.at("units").get<std::string>());
    if (!system || !unit) return bad("an unknown unit");
    DepthTerms terms;
    terms.stage_offset = stage.at("offset").get<double>();
    terms.zero_flow = stage.at("zero_flow").get<double>();
    terms.stage_unit_m = units::to_m(*unit);
    terms.length_unit_m = units::length_to_m(*system);
    if (const auto c = json.find("correction"); c != json.end()) {
      terms.correction = DepthTerms::Correction{
          c->at("from_ms").get<std::int64_t>(), c->at("to_ms").get<std::int64_t>(),
          c->at("offset").get<double>(), c->at("drift").get<double>()};
    }
    return terms;
  } catch (const nlohmann::json::exception& error) {
    return bad(fmt::format("no stage terms in its JSON text ({})", error.what()));
  }
}

}  // namespace

Result<void> record_depth_terms(sqlite::Connection& connection, std::int64_t config_id,
                                const DepthTerms& terms) {
  auto insert = connection.cached(
      "INSERT INTO version_depth_terms (config_id, stage_offset, zero_flow, stage_unit_m, "
      "length_unit_m, correction_from_ms, correction_to_ms, correction_offset, correction_drift) "
      "VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9) ON CONFLICT (config_id) DO NOTHING");
  if (!insert) return std::unexpected(insert.error());
  auto& s = **insert;
  s.bind(1, config_id);
  s.bind(2, terms.stage_offset);
  s.bind(3, terms.zero_flow);
  s.bind(4, terms.stage_unit_m);
  s.bind(5, terms.length_unit_m);
  if (const auto& c = terms.correction) {
    s.bind(6, c->from_ms);
    s.bind(7, c->to_ms);
    s.bind(8, c->offset);
    s.bind(9, c->drift);
  } else {
    for (int column = 6; column <= 9; ++column) s.bind_null(column);
  }
  return s.run();
}

Result<void> fill_depth_terms(sqlite::Connection& connection) {
  auto select = connection.prepare(
      "SELECT config_id, config_json FROM config_versions WHERE config_id NOT IN "
      "(SELECT config_id FROM version_depth_terms) ORDER BY config_id");
  if (!select) return std::unexpected(select.error());
  std::vector<std::pair<std::int64_t, std::string>> missing;
  auto read = each_row(
      *select, [&](const auto& s) { missing.emplace_back(s.column_int64(0), s.column_text(1)); });
  if (!read) return read;
  for (const auto& [config_id, json] : missing) {
    auto terms = parse_terms(config_id, json);
    if (!terms) return std::unexpected(terms.error());
    if (auto done = record_depth_terms(connection, config_id, *terms); !done) return done;
  }
  return {};
}

}  // namespace stagewell::store_detail
