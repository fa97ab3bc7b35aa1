// Flow-duration statistics against published and closed-form values.
#include <doctest/doctest.h>

#include <optional>
#include <vector>

#include "stagewell/statistics.hpp"

namespace stagewell::stats {
namespace {

TEST_CASE("Weibull exceedance with ties at their mean rank: the published worked vector") {
  // Definition: p = m / (n + 1) on flows ranked from the largest (Vogel and Fennessey,
  // "Flow-duration curves I", ASCE J. Water Resour. Plann. Manage. 120(4), 1994). Worked vector:
  // documentation of the open-source R function calc_exceedance_prob (package preMetabolizer):
  // flows (10, 5, 0, 15, 8, missing, 0, 20) give (0.3750, 0.6250, 0.8125, 0.2500, 0.5000,
  // missing, 0.8125, 0.1250). The two zeros share ranks 6 and 7: 6.5 / 8 = 0.8125.
  const std::vector<std::optional<double>> flows{10, 5, 0, 15, 8, std::nullopt, 0, 20};
  const std::vector<std::optional<double>> published{0.3750, 0.6250,       0.8125, 0.2500,
                                                     0.5000, std::nullopt, 0.8125, 0.1250};
  const auto p = exceedance_probabilities(flows);
  REQUIRE(p.size() == published.size());
  for (std::size_t i = 0; i < p.size(); ++i) {
    CAPTURE(i);
    REQUIRE(p[i].has_value() == published[i].has_value());
    if (p[i]) CHECK(*p[i] == doctest::Approx(*published[i]).epsilon(1e-12));
  }
  // The "count of flows >= x" rule would give 7/8 = 0.875 for the zeros: not this definition.
  CHECK(*p[2] != doctest::Approx(0.875));
}

TEST_CASE("Q(p): linear between the plotting positions, nothing beyond the record") {
  // Flows 1..9 (n = 9): the i-th largest sits at p = i/10. Closed form [C]; equal to Hyndman and
  // Fan's sample quantile definition 6 at 1 - p ("Sample quantiles in statistical packages",
  // The American Statistician 50(4), 1996; from memory), which numpy calls method="weibull".
  const std::vector<double> flows{3, 1, 4, 5, 9, 2, 6, 8, 7};
  CHECK(*flow_exceeded(flows, 0.5) == doctest::Approx(5.0));   // the median
  CHECK(*flow_exceeded(flows, 0.25) == doctest::Approx(7.5));  // between 8 (0.2) and 7 (0.3)
  CHECK(*flow_exceeded(flows, 0.1) == doctest::Approx(9.0));   // the largest, at 1/(n+1)
  CHECK(*flow_exceeded(flows, 0.9) == doctest::Approx(1.0));   // the smallest, at n/(n+1)
  CHECK_FALSE(flow_exceeded(flows, 0.05).has_value());         // h = 0.5 < 1: before the largest
  CHECK_FALSE(flow_exceeded(flows, 0.95).has_value());         // h = 9.5 > 9: after the smallest
  CHECK_FALSE(flow_exceeded({}, 0.5).has_value());
}

TEST_CASE("days of the range without any figures are left out too, and counted") {
  // Four days with figures (March 1-4, the 4th incomplete) in a range of March 1-31: 31 days, 3
  // complete, so 28 left out [C]; the curve is that of the 3 complete days whatever the range.
  std::vector<daily::DayFigures> days;
  for (int i = 0; i < 4; ++i) {
    daily::DayFigures d;
    d.day = daily::Day(2026, 3, 1 + i);
    d.start_ms = i * 86'400'000LL;
    d.end_ms = d.start_ms + 86'400'000LL;
    d.covered_ms = i == 3 ? 3'600'000 : 86'400'000;
    d.mean_discharge = 1.0 + i;
    days.push_back(d);
  }
  const auto month = flow_duration(days, daily::Day(2026, 3, 1), daily::Day(2026, 3, 31));
  CHECK(month.days_left_out == 28);
  CHECK(month.curve.size() == 3);
  // A range that cuts the figures: only its own days count (March 2-3: both complete).
  const auto two = flow_duration(days, daily::Day(2026, 3, 2), daily::Day(2026, 3, 3));
  CHECK(two.days_left_out == 0);
  CHECK(two.curve.size() == 2);
}

TEST_CASE("the duration curve uses complete days only, from the largest mean down") {
  std::vector<daily::DayFigures> days;
  const double means[] = {4.0, 1.0, 3.0, 2.0};
  for (int i = 0; i < 4; ++i) {
    daily::DayFigures d;
    d.day = daily::Day(2026, 3, 1 + i);
    d.start_ms = i * 86'400'000LL;
    d.end_ms = d.start_ms + 86'400'000LL;
    d.covered_ms = i == 3 ? 3'600'000 : 86'400'000;  // the 4th day has missing time
    d.mean_discharge = means[i];
    days.push_back(d);
  }
  const auto duration = flow_duration(days, daily::Day(2026, 3, 1), daily::Day(2026, 3, 4));
  CHECK(duration.days_left_out == 1);
  REQUIRE(duration.curve.size() == 3);
  CHECK(duration.curve[0].mean_discharge == 4.0);
  CHECK(duration.curve[0].exceedance == doctest::Approx(0.25));  // 1 / (3 + 1)
  CHECK(duration.curve[2].mean_discharge == 1.0);
  CHECK(duration.curve[2].exceedance == doctest::Approx(0.75));
  // Q50 of (4, 3, 1): the 2nd largest at 0.5 [C].
  CHECK(*duration.exceeded[3] == doctest::Approx(3.0));
}

}  // namespace
}  // namespace stagewell::stats
