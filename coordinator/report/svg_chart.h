// SvgChart: the small drawing kit behind the report's inline SVG charts —
// XML escaping, compact number text, "nice" axis ticks, a linear scale, and
// Svg, which appends elements to one string (no DOM, no allocation per
// attribute beyond the text itself). Element styling is by CSS class, so
// the page's stylesheet owns the colours. Values; thread-compatible.
#pragma once

#include <string>
#include <string_view>
#include <utility>
#include <vector>

namespace fanfold {

// Escapes & < > " ' for text and attribute values.
std::string XmlEscape(std::string_view text);
// Coordinates with at most two decimals, no trailing zeros: "12.5", "3".
std::string SvgNum(double v);
// Tick values covering [lo, hi], about `target` of them, at 1, 2 or 5 times
// a power of ten (Heckbert, "Nice numbers for graph labels", Graphics Gems,
// 1990). Returns {lo} when lo >= hi.
std::vector<double> NiceTicks(double lo, double hi, int target);
// The smallest tick-aligned value >= v (for the top of an axis).
double NiceCeiling(double v);
// Label text for a tick: "0", "0.25", "1.5k", "12M".
std::string TickLabel(double v);

// An upper estimate of `text`'s width in CSS pixels at `font_px`: DejaVu
// Sans, the widest of the page's fonts, averages under 0.62 em a character
// (UTF-8 counted by characters).
double TextWidthEstimate(std::string_view text, double font_px);

// Baselines for labels that want the rows `wanted` (any order): the same
// order back, at least `gap` apart, moved as little as a forward then a
// backward pass allows, and kept within [lo, hi] when they fit there.
std::vector<double> SpreadLabels(const std::vector<double>& wanted, double gap, double lo, double hi);

struct LinearScale {
  double d0 = 0, d1 = 1;  // domain
  double r0 = 0, r1 = 1;  // range (pixels)
  double operator()(double v) const { return d1 == d0 ? r0 : r0 + (v - d0) * (r1 - r0) / (d1 - d0); }
};

class Svg {
 public:
  // A <svg> of the given size in CSS pixels, with role="img" and the
  // aria-label `label` (read by screen readers instead of the drawing).
  Svg(double width, double height, const std::string& label, const std::string& css_class = "chart");

  // `attrs` is raw attribute text (class="..." data-x="..."), already
  // escaped by the caller; `title` (plain text) becomes a hover <title>.
  void Rect(double x, double y, double w, double h, const std::string& attrs, const std::string& title = "");
  void Line(double x1, double y1, double x2, double y2, const std::string& attrs);
  void Text(double x, double y, const std::string& text, const std::string& attrs = "");
  void Polyline(const std::vector<std::pair<double, double>>& points, const std::string& attrs);
  void Circle(double cx, double cy, double r, const std::string& attrs, const std::string& title = "");
  void Path(const std::string& d, const std::string& attrs);
  void Raw(const std::string& markup) { out_ += markup; }
  void OpenGroup(const std::string& attrs, const std::string& title = "");
  void CloseGroup() { out_ += "</g>"; }

  // Axes: ticks, labels and a caption. The x axis at pixel row y, the
  // y axis at pixel column x; grid lines span the plot rectangle.
  void XAxis(const LinearScale& sx, double y, double grid_top, const std::vector<double>& ticks,
             const std::string& caption);
  void YAxis(const LinearScale& sy, double x, double grid_right, const std::vector<double>& ticks,
             const std::string& caption);

  std::string Finish();

 private:
  std::string out_;
  double width_, height_;
};

}  // namespace fanfold
