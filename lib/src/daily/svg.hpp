// A small SVG writer: just the elements the plots draw, with text escaped for XML. Coordinates
// are in pixels, y downward (SVG's convention).
#pragma once

#include <string>
#include <string_view>
#include <utility>
#include <vector>

namespace stagewell::plot_detail {

struct Point {
  double x = 0.0;
  double y = 0.0;
};

enum class Anchor { start, middle, end };

class Svg {
 public:
  Svg(double width, double height);

  void rect(double x, double y, double width, double height, std::string_view style);
  void line(Point a, Point b, std::string_view style);
  void polyline(const std::vector<Point>& points, std::string_view style);
  void circle(Point centre, double radius, std::string_view style);
  void path(std::string_view data, std::string_view style);
  // `rotate` in degrees about the anchor point (-90 for a vertical axis title).
  void text(Point at, std::string_view content, Anchor anchor = Anchor::start, double size = 13,
            double rotate = 0, std::string_view style = "");
  // Groups the elements written until end_group(); `cls` names it for tests and style sheets.
  void begin_group(std::string_view cls);
  void end_group();

  std::string finish();  // closes the document; the writer is then done

 private:
  std::string out_;
};

// Text with &, <, >, " escaped.
std::string xml_escape(std::string_view text);

// A number for an attribute: 2 decimals, no trailing zeros.
std::string coord(double value);

}  // namespace stagewell::plot_detail
