#include "coordinator/report/svg_chart.h"

#include <algorithm>
#include <cmath>
#include <cstdio>

namespace fanfold {

std::string XmlEscape(std::string_view s) {
  std::string out;
  out.reserve(s.size());
  for (char c : s) {
    switch (c) {
      case '&': out += "&amp;"; break;
      case '<': out += "&lt;"; break;
      case '>': out += "&gt;"; break;
      case '"': out += "&quot;"; break;
      case '\'': out += "&#39;"; break;
      default:
        // Control characters are not allowed in XML 1.0 text.
        if (static_cast<unsigned char>(c) < 0x20 && c != '\n' && c != '\t') out += "\xEF\xBF\xBD";
        else out += c;
    }
  }
  return out;
}

std::string SvgNum(double v) {
  if (!std::isfinite(v)) return "0";
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.2f", v);
  std::string s = buf;
  while (!s.empty() && s.back() == '0') s.pop_back();
  if (!s.empty() && s.back() == '.') s.pop_back();
  if (s == "-0") s = "0";
  return s;
}

namespace {

// Heckbert's nice number: 1, 2, 5 or 10 times a power of ten.
double NiceNumber(double x, bool round) {
  const double e = std::floor(std::log10(x));
  const double f = x / std::pow(10, e);
  double nf;
  if (round) nf = f < 1.5 ? 1 : f < 3 ? 2 : f < 7 ? 5 : 10;
  else nf = f <= 1 ? 1 : f <= 2 ? 2 : f <= 5 ? 5 : 10;
  return nf * std::pow(10, e);
}

}  // namespace

std::vector<double> NiceTicks(double lo, double hi, int target) {
  if (!(hi > lo) || !std::isfinite(lo) || !std::isfinite(hi)) return {lo};
  const double range = NiceNumber(hi - lo, false);
  const double step = NiceNumber(range / std::max(1, target - 1), true);
  std::vector<double> ticks;
  for (double t = std::floor(lo / step) * step; t <= hi + step * 1e-9; t += step) {
    if (t >= lo - step * 1e-9) ticks.push_back(std::abs(t) < step * 1e-9 ? 0.0 : t);
    if (ticks.size() > 100) break;
  }
  return ticks;
}

double NiceCeiling(double v) {
  if (!(v > 0)) return 1;
  const std::vector<double> t = NiceTicks(0, v, 5);
  const double step = t.size() > 1 ? t[1] - t[0] : v;
  return std::ceil(v / step - 1e-9) * step;
}

std::string TickLabel(double v) {
  const double a = std::abs(v);
  char buf[32];
  if (a >= 1e9) std::snprintf(buf, sizeof buf, "%gG", v / 1e9);
  else if (a >= 1e6) std::snprintf(buf, sizeof buf, "%gM", v / 1e6);
  else if (a >= 1e4) std::snprintf(buf, sizeof buf, "%gk", v / 1e3);
  else std::snprintf(buf, sizeof buf, "%g", std::abs(v) < 1e-12 ? 0.0 : v);
  return buf;
}

Svg::Svg(double width, double height, const std::string& label, const std::string& css_class)
    : width_(width), height_(height) {
  out_ = "<svg xmlns=\"http://www.w3.org/2000/svg\" class=\"" + XmlEscape(css_class) + "\" viewBox=\"0 0 " +
         SvgNum(width) + " " + SvgNum(height) + "\" width=\"" + SvgNum(width) + "\" height=\"" + SvgNum(height) +
         "\" role=\"img\" aria-label=\"" + XmlEscape(label) + "\">";
}

void Svg::Rect(double x, double y, double w, double h, const std::string& attrs, const std::string& title) {
  out_ += "<rect x=\"" + SvgNum(x) + "\" y=\"" + SvgNum(y) + "\" width=\"" + SvgNum(std::max(w, 0.0)) +
          "\" height=\"" + SvgNum(std::max(h, 0.0)) + "\" " + attrs;
  if (title.empty()) out_ += "/>";
  else out_ += "><title>" + XmlEscape(title) + "</title></rect>";
}

void Svg::Line(double x1, double y1, double x2, double y2, const std::string& attrs) {
  out_ += "<line x1=\"" + SvgNum(x1) + "\" y1=\"" + SvgNum(y1) + "\" x2=\"" + SvgNum(x2) + "\" y2=\"" +
          SvgNum(y2) + "\" " + attrs + "/>";
}

double TextWidthEstimate(std::string_view text, double font_px) {
  size_t chars = 0;
  for (unsigned char c : text) chars += (c & 0xC0) != 0x80;  // count lead bytes only
  return static_cast<double>(chars) * 0.62 * font_px;
}

std::vector<double> SpreadLabels(const std::vector<double>& wanted, double gap, double lo, double hi) {
  std::vector<size_t> order(wanted.size());
  for (size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::stable_sort(order.begin(), order.end(), [&](size_t a, size_t b) { return wanted[a] < wanted[b]; });
  std::vector<double> y(wanted.size());
  double prev = lo - gap;
  for (size_t i : order) prev = y[i] = std::max(wanted[i], prev + gap);
  double next = hi + gap;
  for (auto it = order.rbegin(); it != order.rend(); ++it) next = y[*it] = std::min(y[*it], next - gap);
  return y;
}

void Svg::Text(double x, double y, const std::string& text, const std::string& attrs) {
  out_ += "<text x=\"" + SvgNum(x) + "\" y=\"" + SvgNum(y) + "\" " + attrs + ">" + XmlEscape(text) + "</text>";
}

void Svg::Polyline(const std::vector<std::pair<double, double>>& pts, const std::string& attrs) {
  out_ += "<polyline points=\"";
  for (size_t i = 0; i < pts.size(); ++i)
    out_ += (i ? " " : "") + SvgNum(pts[i].first) + "," + SvgNum(pts[i].second);
  out_ += "\" " + attrs + "/>";
}

void Svg::Circle(double cx, double cy, double r, const std::string& attrs, const std::string& title) {
  out_ += "<circle cx=\"" + SvgNum(cx) + "\" cy=\"" + SvgNum(cy) + "\" r=\"" + SvgNum(r) + "\" " + attrs;
  if (title.empty()) out_ += "/>";
  else out_ += "><title>" + XmlEscape(title) + "</title></circle>";
}

void Svg::Path(const std::string& d, const std::string& attrs) {
  out_ += "<path d=\"" + d + "\" " + attrs + "/>";
}

void Svg::OpenGroup(const std::string& attrs, const std::string& title) {
  out_ += "<g " + attrs + ">";
  if (!title.empty()) out_ += "<title>" + XmlEscape(title) + "</title>";
}

void Svg::XAxis(const LinearScale& sx, double y, double grid_top, const std::vector<double>& ticks,
                const std::string& caption) {
  out_ += "<g class=\"axis\">";
  for (double t : ticks) {
    const double x = sx(t);
    Line(x, grid_top, x, y, "class=\"grid\"");
    Line(x, y, x, y + 4, "class=\"tick\"");
    Text(x, y + 16, TickLabel(t), "text-anchor=\"middle\"");
  }
  Line(std::min(sx.r0, sx.r1), y, std::max(sx.r0, sx.r1), y, "class=\"baseline\"");
  if (!caption.empty()) Text((sx.r0 + sx.r1) / 2, y + 34, caption, "class=\"caption\" text-anchor=\"middle\"");
  out_ += "</g>";
}

void Svg::YAxis(const LinearScale& sy, double x, double grid_right, const std::vector<double>& ticks,
                const std::string& caption) {
  out_ += "<g class=\"axis\">";
  for (double t : ticks) {
    const double y = sy(t);
    Line(x, y, grid_right, y, "class=\"grid\"");
    Text(x - 6, y + 4, TickLabel(t), "text-anchor=\"end\"");
  }
  Line(x, std::min(sy.r0, sy.r1), x, std::max(sy.r0, sy.r1), "class=\"baseline\"");
  if (!caption.empty()) {
    const double cy = (sy.r0 + sy.r1) / 2;
    out_ += "<text class=\"caption\" text-anchor=\"middle\" transform=\"translate(" + SvgNum(x - 44) + " " +
            SvgNum(cy) + ") rotate(-90)\">" + XmlEscape(caption) + "</text>";
  }
  out_ += "</g>";
}

std::string Svg::Finish() {
  out_ += "</svg>";
  return std::move(out_);
}

}  // namespace fanfold
