// discharge_dips and main_channel_banks on invented sections whose geometry is worked by hand.
// [C] marks a closed form: the trapezoid and rectangle areas and perimeters written out, and
// Manning's equation Q = (1/n) A R^(2/3) S^(1/2) (metric).
#include "stagewell/discharge_dips.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <vector>

#include "section_builders.hpp"

using namespace stagewell;
using namespace stagewell::testing;

namespace {

constexpr double kN = 0.035;
constexpr double kSlope = 0.001;
const double kSide = std::sqrt(8.0);  // a main channel side: 2 across, 2 up [C]

double manning(double area, double perimeter) {
  return area * std::pow(area / perimeter, 2.0 / 3.0) * std::sqrt(kSlope) / kN;  // [C]
}

// A main channel 6 wide at the bottom and 10 at its bank tops (2 deep, stations 30 and 40)
// between two level overbanks 30 wide at elevation 2, with walls at stations 0 and 70 up to 4.
SectionSpec level_overbanks() {
  SectionSpec spec;
  spec.shape = Shape::surveyed;
  spec.points = {{0, 4}, {0, 2}, {30, 2}, {32, 0}, {38, 0}, {40, 2}, {70, 2}, {70, 4}};
  return spec;
}

// Whole-section discharge of level_overbanks() at depth y [C]. Ground exactly at the water is
// dry (section.hpp), so at y = 2 the overbanks are not yet wet; above 2 they are, all at once.
double level_overbanks_discharge(double y) {
  // In the main channel the sides rise 1 per 1: A = (6 + y) y, P = 6 + 2 sqrt(2) y.
  if (y <= 2.0) return manning((6.0 + y) * y, 6.0 + 2.0 * std::sqrt(2.0) * y);
  const double above = y - 2.0;
  return manning(16.0 + 70.0 * above, 6.0 + 2.0 * kSide + 60.0 + 2.0 * above);
}

}  // namespace

TEST_CASE("a level overbank: discharge falls where it floods, at the bank tops") {
  const auto c = channel(level_overbanks(), {kN}, kSlope);
  // The hand-worked form agrees with the channel on both sides of the bank tops.
  for (const double y : {0.7, 2.0, 2.001, 3.1}) {
    CAPTURE(y);
    CHECK(c->discharge(y) == doctest::Approx(level_overbanks_discharge(y)).epsilon(1e-12));
  }

  const std::vector<DischargeDip> dips = discharge_dips(*c);
  REQUIRE(dips.size() == 1);
  const DischargeDip& dip = dips.front();
  // The peak is at the bank tops exactly: 2 is a surveyed height, so the scan holds it.
  CHECK(dip.from_depth == 2.0);
  CHECK(dip.from_discharge == doctest::Approx(manning(16.0, 6.0 + 2.0 * kSide)).epsilon(1e-12));
  // The trough is just above: the scan's next step (top 4 m / 20000 steps).
  CHECK(dip.to_depth > 2.0);
  CHECK(dip.to_depth <= 2.0 + 4.0 / 20000 * (1 + 1e-9));
  CHECK(dip.to_discharge ==
        doctest::Approx(level_overbanks_discharge(dip.to_depth)).epsilon(1e-12));
  // The loss is the perimeter's jump, by 60, at nearly the same area: 1 - (P/(P+60))^(2/3) [C]
  // (to within the area added by the scan's step).
  const double perimeter = 6.0 + 2.0 * kSide;
  CHECK(dip.loss_fraction() ==
        doctest::Approx(1.0 - std::pow(perimeter / (perimeter + 60.0), 2.0 / 3.0)).epsilon(2e-3));
  CHECK(dip.loss_fraction() > 0.6);
  // Back to the bank-full discharge higher up: the closed form agrees there.
  REQUIRE(dip.recovered_depth);
  CHECK(*dip.recovered_depth > dip.to_depth);
  CHECK(*dip.recovered_depth < 4.0);
  CHECK(level_overbanks_discharge(*dip.recovered_depth) ==
        doctest::Approx(dip.from_discharge).epsilon(1e-12));
  CHECK(level_overbanks_discharge(*dip.recovered_depth * (1 - 1e-6)) < dip.from_discharge);

  const MainChannelBanks banks = main_channel_banks(level_overbanks(), dip.from_depth);
  REQUIRE(banks.left);
  REQUIRE(banks.right);
  CHECK(banks.left->station == 30.0);
  CHECK(banks.left->elevation == 2.0);
  CHECK(banks.left->overtopped);
  CHECK(banks.right->station == 40.0);
  CHECK(banks.right->overtopped);
}

TEST_CASE("the same section divided at the bank tops has no dip") {
  // Divided-channel method (channel.hpp): each overbank starts from zero discharge when it
  // floods, and the main channel's dividing verticals add no perimeter.
  SectionSpec spec = level_overbanks();
  spec.breaks = {30.0, 40.0};
  CHECK(discharge_dips(*channel(spec, {0.06, kN, 0.06}, kSlope)).empty());
}

TEST_CASE("overbanks at two levels: one dip each, the overtopped bank named") {
  // The left overbank at 2 as above; the right bank rises 3 in 3 to a level overbank at 3.
  SectionSpec spec;
  spec.shape = Shape::surveyed;
  spec.points = {{0, 4}, {0, 2}, {30, 2}, {32, 0}, {38, 0}, {41, 3}, {60, 3}, {60, 4}};
  const auto c = channel(spec, {kN}, kSlope);
  const auto dips = discharge_dips(*c);
  REQUIRE(dips.size() == 2);
  CHECK(dips[0].from_depth == 2.0);
  CHECK(dips[1].from_depth == 3.0);
  // At 3 the right overbank adds 19 of perimeter to: left wall 1, left overbank 30, left side
  // sqrt 8, bottom 6, right side sqrt 18 [C].
  const double perimeter = 1.0 + 30.0 + kSide + 6.0 + std::sqrt(18.0);
  CHECK(dips[1].loss_fraction() ==
        doctest::Approx(1.0 - std::pow(perimeter / (perimeter + 19.0), 2.0 / 3.0)).epsilon(3e-3));

  // At the first dip the left bank top is overtopped; the right bank is still rising.
  const auto first = main_channel_banks(spec, 2.0);
  REQUIRE(first.left);
  CHECK(first.left->station == 30.0);
  CHECK(first.left->overtopped);
  REQUIRE(first.right);
  CHECK(first.right->station == 41.0);
  CHECK(first.right->elevation == 3.0);
  CHECK_FALSE(first.right->overtopped);
  // At the second the left overbank is under water up to the end wall: no bank on that side.
  const auto second = main_channel_banks(spec, 3.0);
  CHECK_FALSE(second.left);
  REQUIRE(second.right);
  CHECK(second.right->station == 41.0);
  CHECK(second.right->overtopped);
}

TEST_CASE("prismatic sections and pipes report no dip") {
  CHECK(discharge_dips(*channel(rectangle(2.0, 1.0), {0.013}, 0.001)).empty());
  CHECK(discharge_dips(*channel(trapezoid(3.0, 1.5, 2.0, 1.5), {0.025}, 0.0004)).empty());
  // A pipe's discharge falls above about 0.938 D (Chow, Open-Channel Hydraulics, from memory),
  // by its shape: not scanned.
  const auto pipe = channel(circle(0.9), {0.013}, 0.002);
  REQUIRE(pipe->discharge(0.9) < pipe->discharge(0.85));
  CHECK(discharge_dips(*pipe).empty());
}

TEST_CASE("a dip smaller than the threshold is left out") {
  const auto c = channel(level_overbanks(), {kN}, kSlope);
  const double loss = discharge_dips(*c).front().loss_fraction();
  CHECK(discharge_dips(*c, loss * 1.01).empty());
  CHECK(discharge_dips(*c, loss * 0.99).size() == 1);
}
