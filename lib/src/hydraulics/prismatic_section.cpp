// Rectangular, trapezoidal and triangular sections: one straight-sided trapezoid whose bottom
// width or side slopes may be zero.
//
//   A = y (b + (m_l + m_r) y / 2)
//   P = b + y (sqrt(1 + m_l^2) + sqrt(1 + m_r^2))
//   T = b + (m_l + m_r) y
//
// Above the top (height H) the walls continue vertically at the top width T(H).
#include <algorithm>
#include <cmath>

#include "hydraulics/section_shapes.hpp"

namespace stagewell::detail {
namespace {

class PrismaticSection final : public Section {
 public:
  PrismaticSection(Shape shape, double bottom_width, double slope_left, double slope_right,
                   double height)
      : shape_(shape),
        bottom_width_(bottom_width),
        slope_sum_(slope_left + slope_right),
        side_length_per_depth_(std::hypot(1.0, slope_left) + std::hypot(1.0, slope_right)),
        height_(height) {}

  Shape shape() const override { return shape_; }
  double top_depth() const override { return height_; }

  void subsections(double depth, std::span<Geometry> out) const override {
    Geometry& g = out[0];
    if (!(depth > 0.0)) {
      g = Geometry{};
      return;
    }
    const double y = std::min(depth, height_);
    g.top_width = bottom_width_ + slope_sum_ * y;
    g.area = y * (bottom_width_ + 0.5 * slope_sum_ * y);
    g.wetted_perimeter = bottom_width_ + side_length_per_depth_ * y;
    if (depth > height_) {
      const double above = depth - height_;  // water between the vertical walls
      g.area += g.top_width * above;
      g.wetted_perimeter += 2.0 * above;
    }
  }

 private:
  Shape shape_;
  double bottom_width_;           // L
  double slope_sum_;              // m_l + m_r, horizontal per vertical
  double side_length_per_depth_;  // wetted side length per unit depth, both sides
  double height_;                 // L
};

}  // namespace

std::unique_ptr<const Section> make_prismatic(Shape shape, double bottom_width, double slope_left,
                                              double slope_right, double height) {
  return std::make_unique<PrismaticSection>(shape, bottom_width, slope_left, slope_right, height);
}

}  // namespace stagewell::detail
