#include "daily/svg.hpp"

#include <fmt/format.h>

#include <cmath>

namespace stagewell::plot_detail {

std::string xml_escape(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  for (const char c : text) {
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      default:
        out += c;
    }
  }
  return out;
}

std::string coord(double value) {
  if (!std::isfinite(value)) return "0";
  std::string text = fmt::format("{:.2f}", value);
  while (text.back() == '0') text.pop_back();
  if (text.back() == '.') text.pop_back();
  return text == "-0" ? "0" : text;
}

Svg::Svg(double width, double height) {
  out_ = fmt::format(
      "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
      "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{0}\" height=\"{1}\" "
      "viewBox=\"0 0 {0} {1}\" font-family=\"DejaVu Sans, Arial, sans-serif\">\n",
      coord(width), coord(height));
  rect(0, 0, width, height, "fill:#ffffff");
}

void Svg::rect(double x, double y, double width, double height, std::string_view style) {
  out_ += fmt::format("<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" style=\"{}\"/>\n",
                      coord(x), coord(y), coord(width), coord(height), style);
}

void Svg::line(Point a, Point b, std::string_view style) {
  out_ += fmt::format("<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" style=\"{}\"/>\n", coord(a.x),
                      coord(a.y), coord(b.x), coord(b.y), style);
}

void Svg::polyline(const std::vector<Point>& points, std::string_view style) {
  if (points.empty()) return;
  out_ += "<polyline points=\"";
  for (std::size_t i = 0; i < points.size(); ++i) {
    if (i > 0) out_ += ' ';
    out_ += coord(points[i].x);
    out_ += ',';
    out_ += coord(points[i].y);
  }
  out_ += fmt::format("\" style=\"fill:none;{}\"/>\n", style);
}

void Svg::circle(Point centre, double radius, std::string_view style) {
  out_ += fmt::format("<circle cx=\"{}\" cy=\"{}\" r=\"{}\" style=\"{}\"/>\n", coord(centre.x),
                      coord(centre.y), coord(radius), style);
}

void Svg::path(std::string_view data, std::string_view style) {
  out_ += fmt::format("<path d=\"{}\" style=\"{}\"/>\n", data, style);
}

void Svg::text(Point at, std::string_view content, Anchor anchor, double size, double rotate,
               std::string_view style) {
  const char* anchor_name =
      anchor == Anchor::start ? "start" : (anchor == Anchor::middle ? "middle" : "end");
  std::string transform;
  if (rotate != 0) {
    transform =
        fmt::format(" transform=\"rotate({} {} {})\"", coord(rotate), coord(at.x), coord(at.y));
  }
  out_ += fmt::format("<text x=\"{}\" y=\"{}\" font-size=\"{}\" text-anchor=\"{}\"{}{}>{}</text>\n",
                      coord(at.x), coord(at.y), coord(size), anchor_name, transform,
                      style.empty() ? std::string() : fmt::format(" style=\"{}\"", style),
                      xml_escape(content));
}

void Svg::begin_group(std::string_view cls) {
  out_ += fmt::format("<g class=\"{}\">\n", xml_escape(cls));
}

void Svg::end_group() { out_ += "</g>\n"; }

std::string Svg::finish() {
  out_ += "</svg>\n";
  return std::move(out_);
}

}  // namespace stagewell::plot_detail
