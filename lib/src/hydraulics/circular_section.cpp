// A circular conduit of diameter D, partly full. With theta the angle the water surface subtends
// at the centre:
//
//   theta = 2 arccos(1 - 2y/D) = 4 arcsin(sqrt(y/D))
//   A = D^2 (theta - sin theta) / 8,   P = D theta / 2,   T = D sin(theta/2) = 2 sqrt(y (D - y))
//
// The arcsine form and the series for theta - sin theta keep full relative precision at small
// depths, where rating tables and normal-depth solutions need it; above half full the angle is
// taken from the empty part, which keeps precision near the crown. Above the crown the conduit is
// full: A = pi D^2 / 4, P = pi D, T = 0.
#include <cmath>
#include <numbers>

#include "hydraulics/section_shapes.hpp"

namespace stagewell::detail {
namespace {

// theta - sin(theta) without the cancellation of the direct form at small angles.
double theta_minus_sine(double theta) {
  if (theta >= 0.5) return theta - std::sin(theta);
  // theta^3/3! - theta^5/5! + ...; below 0.5 rad the terms fall by at least 80x each.
  const double theta_squared = theta * theta;
  double term = theta * theta_squared / 6.0;
  double sum = 0.0;
  for (int k = 1; k < 12 && std::abs(term) > 1e-18 * std::abs(sum); ++k) {
    sum += term;
    term *= -theta_squared / ((2.0 * k + 2.0) * (2.0 * k + 3.0));
  }
  return sum;
}

class CircularSection final : public Section {
 public:
  explicit CircularSection(double diameter) : diameter_(diameter) {}

  Shape shape() const override { return Shape::circular; }
  double top_depth() const override { return diameter_; }
  bool closed() const override { return true; }

  void subsections(double depth, std::span<Geometry> out) const override {
    Geometry& g = out[0];
    const double d = diameter_;
    if (!(depth > 0.0)) {
      g = Geometry{};
      return;
    }
    if (depth >= d) {
      g.area = std::numbers::pi * d * d / 4.0;
      g.wetted_perimeter = std::numbers::pi * d;
      g.top_width = 0.0;
      return;
    }
    const double theta = depth <= 0.5 * d
                             ? 4.0 * std::asin(std::sqrt(depth / d))
                             : 2.0 * std::numbers::pi - 4.0 * std::asin(std::sqrt((d - depth) / d));
    g.area = d * d * theta_minus_sine(theta) / 8.0;
    g.wetted_perimeter = d * theta / 2.0;
    g.top_width = 2.0 * std::sqrt(depth * (d - depth));
  }

 private:
  double diameter_;  // L
};

}  // namespace

std::unique_ptr<const Section> make_circular(double diameter) {
  return std::make_unique<CircularSection>(diameter);
}

}  // namespace stagewell::detail
