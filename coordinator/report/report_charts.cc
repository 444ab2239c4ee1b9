#include "coordinator/report/report_charts.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>

#include "coordinator/run/run_summary.h"
#include "coordinator/report/svg_chart.h"

namespace fanfold {
namespace {

constexpr double kWidth = 1100;
constexpr double kLeft = 96, kRight = 24, kTop = 14;
constexpr double kMinUnfinishedPx = 6;  // a failed or retried attempt's bar is never thinner
constexpr double kMarkerFontPx = 12, kSeriesFontPx = 12.5;  // .marker-label, .series-label in the page's CSS

// A label beside the vertical line at x, inside [left, right]: to the line's
// right when it fits there, else to its left.
void LabelBesideLine(Svg& svg, double x, double y, double left, double right, const std::string& text) {
  const double w = TextWidthEstimate(text, kMarkerFontPx);
  if (x + 4 + w <= right || x - 4 - w < left) svg.Text(x + 4, y, text, "class=\"marker-label\"");
  else svg.Text(x - 4, y, text, "class=\"marker-label\" text-anchor=\"end\"");
}

std::string FileName(const std::string& path) { return std::filesystem::path(path).filename().string(); }

std::string Fmt(const char* f, double v) {
  char buf[64];
  std::snprintf(buf, sizeof buf, f, v);
  return buf;
}

std::string OutcomeLabel(const AttemptEntry& a) {
  if (a.outcome == "done") return "done";
  if (a.outcome == "failed") return "failed (bad data)";
  if (a.outcome == "died") return a.final ? "worker died; quarantined" : "worker died; retried";
  if (a.outcome == "timed-out") return a.final ? "timed out; quarantined" : "timed out; retried";
  if (a.outcome == "rejected") return a.final ? "partial arrived corrupt; quarantined" : "partial arrived corrupt; retried";
  return a.outcome;
}

std::string AttemptTitle(const RunRecord& r, const AttemptEntry& a, double s0, double s1) {
  std::string t = "shard " + std::to_string(a.shard) + " · " + FileName(r.ShardPath(a.shard)) + "\nattempt " +
                  std::to_string(a.attempt) + " on worker " + std::to_string(a.worker) +
                  (a.node.empty() ? "" : " (" + a.node + ")") + ": " + OutcomeLabel(a) +
                  "\n" + Fmt("%.3f", s0) + " s → " + Fmt("%.3f", s1) + " s (" + DurationText(s1 - s0) + ")";
  if (a.done()) {
    t += "\n" + GroupedInteger(a.records) + " records (" + GroupedInteger(a.kept) + " kept, " +
         GroupedInteger(a.malformed) + " malformed), " + Megabytes(a.bytes_raw) + " decompressed";
    t += "\nread " + DurationText(a.read_ns / 1e9) + ", parse " + DurationText(a.parse_ns / 1e9) + ", aggregate " +
         DurationText(a.aggregate_ns / 1e9) + ", encode " + DurationText(a.encode_ns / 1e9);
  } else if (!a.message.empty()) {
    t += "\n" + a.message;
  }
  return t;
}

}  // namespace

std::string DurationText(double s) {
  if (!(s > 0)) return "0 ms";
  if (s >= 100) return Fmt("%.0f s", s);
  if (s >= 10) return Fmt("%.1f s", s);
  if (s >= 1) return Fmt("%.2f s", s);
  if (s >= 0.01) return Fmt("%.0f ms", s * 1e3);
  if (s >= 0.001) return Fmt("%.1f ms", s * 1e3);
  return Fmt("%.2f ms", s * 1e3);
}

std::string ChartDefsSvg() {
  return "<svg class=\"defs\" width=\"0\" height=\"0\" aria-hidden=\"true\" focusable=\"false\"><defs>"
         "<pattern id=\"ff-hatch-failed\" width=\"6\" height=\"6\" patternUnits=\"userSpaceOnUse\" "
         "patternTransform=\"rotate(45)\"><rect width=\"6\" height=\"6\" class=\"hatch-bg-failed\"/>"
         "<line x1=\"0\" y1=\"0\" x2=\"0\" y2=\"6\" class=\"hatch-line-failed\"/></pattern>"
         "<pattern id=\"ff-hatch-retried\" width=\"6\" height=\"6\" patternUnits=\"userSpaceOnUse\">"
         "<rect width=\"6\" height=\"6\" class=\"hatch-bg-retried\"/>"
         "<path d=\"M0,3 H6 M3,0 V6\" class=\"hatch-line-retried\"/></pattern>"
         "</defs></svg>";
}

std::string TimelineSvg(const RunRecord& r, const SessionView& v) {
  const double lane_h = v.lanes <= 16 ? 30 : std::max(10.0, 480.0 / v.lanes);
  const double plot_h = lane_h * v.lanes;
  const double height = kTop + plot_h + 48;
  const double span = v.span_s > 0 ? v.span_s : 1e-3;
  LinearScale sx{0, span, kLeft, kWidth - kRight};
  Svg svg(kWidth, height,
          "Timeline: " + std::to_string(v.attempts.size()) + " shard attempts on " + std::to_string(v.lanes) +
              " workers over " + DurationText(v.span_s),
          "chart timeline");
  for (int lane = 0; lane < v.lanes; ++lane) {
    const double y = kTop + lane * lane_h;
    svg.Rect(kLeft, y, kWidth - kRight - kLeft, lane_h, lane % 2 ? "class=\"lane odd\"" : "class=\"lane\"");
    if (lane_h >= 12 || lane % 4 == 0)
      svg.Text(kLeft - 8, y + lane_h / 2 + 4, "worker " + std::to_string(lane), "class=\"lane-label\" text-anchor=\"end\"");
  }
  svg.XAxis(sx, kTop + plot_h, kTop, NiceTicks(0, span, 10), "seconds since this coordinator started");
  const double pad = lane_h >= 20 ? 4 : 1;
  // Attempts that did not finish their shard are drawn last and at least
  // kMinUnfinishedPx wide, so no neighbour covers them however short they were.
  std::vector<size_t> order(v.attempts.begin(), v.attempts.end());
  std::stable_partition(order.begin(), order.end(), [&](size_t i) { return r.attempts[i].done(); });
  for (size_t i : order) {
    const AttemptEntry& a = r.attempts[i];
    const double s0 = static_cast<double>(a.start_ns - v.t0_ns) / 1e9;
    const double s1 = static_cast<double>(std::max(a.end_ns, a.start_ns) - v.t0_ns) / 1e9;
    const double x = sx(s0), w = std::max(a.done() ? 1.5 : kMinUnfinishedPx, sx(s1) - sx(s0));
    const double y = kTop + a.worker * lane_h + pad, h = lane_h - 2 * pad;
    std::string cls = "bar " + a.outcome;
    if (!a.final) cls += " retried";
    const std::string id = std::to_string(a.shard) + "." + std::to_string(a.attempt);
    svg.OpenGroup("class=\"attempt\"");
    svg.Rect(x, y, w, h,
             "class=\"" + cls + "\" data-attempt=\"" + id + "\" data-shard=\"" + std::to_string(a.shard) +
                 "\" data-worker=\"" + std::to_string(a.worker) + "\" data-outcome=\"" + XmlEscape(a.outcome) + "\"",
             AttemptTitle(r, a, s0, s1));
    // Not colour alone: a symbol on every attempt that did not finish its shard.
    const char* mark = a.done() ? nullptr : a.final ? "\u2715" : "\u21BB";
    if (mark && h >= 8) svg.Text(x + w / 2, y + h / 2 + 4, mark, "class=\"bar-mark\" text-anchor=\"middle\"");
    else if (a.done() && w >= 26 && h >= 14)
      svg.Text(x + w / 2, y + h / 2 + 4, std::to_string(a.shard), "class=\"bar-label\" text-anchor=\"middle\"");
    svg.CloseGroup();
  }
  return svg.Finish();
}

std::string ThroughputSvg(const SessionView& v) {
  const double plot_h = 150, height = kTop + plot_h + 48;
  double top = 0;
  for (double m : v.mb_per_s) top = std::max(top, m);
  top = NiceCeiling(top > 0 ? top * 1.05 : 1);
  const double span = v.span_s > 0 ? v.span_s : 1e-3;
  LinearScale sx{0, span, kLeft, kWidth - kRight};
  LinearScale sy{0, top, kTop + plot_h, kTop};
  double peak = 0, sum = 0;
  for (double m : v.mb_per_s) peak = std::max(peak, m), sum += m;
  Svg svg(kWidth, height,
          "Throughput over time: peak " + Fmt("%.1f", peak) + " MB/s, mean " +
              Fmt("%.1f", v.mb_per_s.empty() ? 0 : sum / v.mb_per_s.size()) + " MB/s of decompressed input",
          "chart throughput");
  svg.YAxis(sy, kLeft, kWidth - kRight, NiceTicks(0, top, 5), "MB/s");
  svg.XAxis(sx, kTop + plot_h, kTop, NiceTicks(0, span, 10), "seconds since this coordinator started");
  std::vector<std::pair<double, double>> line;
  std::string area = "M" + SvgNum(sx(0)) + "," + SvgNum(sy(0));
  for (size_t b = 0; b < v.mb_per_s.size(); ++b) {
    const double x0 = sx(b * v.bin_s), x1 = sx((b + 1) * v.bin_s), y = sy(v.mb_per_s[b]);
    line.emplace_back(x0, y);
    line.emplace_back(x1, y);
    area += " L" + SvgNum(x0) + "," + SvgNum(y) + " L" + SvgNum(x1) + "," + SvgNum(y);
  }
  area += " L" + SvgNum(sx(v.mb_per_s.size() * v.bin_s)) + "," + SvgNum(sy(0)) + " Z";
  svg.Path(area, "class=\"area\"");
  svg.Polyline(line, "class=\"series\"");
  // Hover targets, one per bin.
  for (size_t b = 0; b < v.mb_per_s.size(); ++b) {
    const double t0 = b * v.bin_s, t1 = t0 + v.bin_s;
    svg.Rect(sx(t0), kTop, sx(t1) - sx(t0), plot_h, "class=\"hover\"",
             Fmt("%.2f", t0) + "–" + Fmt("%.2f", t1) + " s: " + Fmt("%.1f", v.mb_per_s[b]) + " MB/s, " +
                 GroupedInteger(static_cast<uint64_t>(v.records_per_s[b] + 0.5)) + " records/s");
  }
  return svg.Finish();
}

std::string ShardTimeHistogramSvg(const RunAnalysis& a) {
  const double W = 660, L = 64, R = 16;  // sized for half the page
  // The two marker labels get a row each in a band above the bars, so they
  // cross neither a bar nor each other.
  const double band = 34, top_y = kTop + band;
  const double plot_h = 190, height = top_y + plot_h + 48;
  double hi = 0;
  for (const ShardTime& t : a.shard_times) hi = std::max(hi, t.seconds);
  const double threshold = StragglerThreshold(a);
  hi = NiceCeiling(std::max(hi, threshold) * 1.02);
  const int bins = 30;
  const double width = hi / bins;
  std::vector<int> count(bins, 0), stragglers(bins, 0);
  for (const ShardTime& t : a.shard_times) {
    const int b = std::min(bins - 1, static_cast<int>(t.seconds / width));
    ++count[b];
    stragglers[b] += t.straggler;
  }
  const int most = std::max(1, *std::max_element(count.begin(), count.end()));
  const double top = NiceCeiling(most);
  LinearScale sx{0, hi, L, W - R};
  LinearScale sy{0, top, top_y + plot_h, top_y};
  Svg svg(W, height,
          "Distribution of " + std::to_string(a.shard_times.size()) + " shard times: median " +
              DurationText(a.median_s) + ", " + std::to_string(a.straggler_count) + " stragglers",
          "chart histogram");
  std::vector<double> yt = NiceTicks(0, top, 5);
  yt.erase(std::remove_if(yt.begin(), yt.end(), [](double t) { return t != std::floor(t); }), yt.end());
  svg.YAxis(sy, L, W - R, yt, "shards");
  svg.XAxis(sx, top_y + plot_h, top_y, NiceTicks(0, hi, 6), "seconds per shard (successful attempt)");
  for (int b = 0; b < bins; ++b) {
    if (count[b] == 0) continue;
    const double x = sx(b * width) + 1, w = sx((b + 1) * width) - sx(b * width) - 2;
    const std::string range = DurationText(b * width) + "–" + DurationText((b + 1) * width);
    svg.Rect(x, sy(count[b]), w, sy(0) - sy(count[b]),
             std::string("class=\"hist") + (stragglers[b] ? " straggler" : "") + "\"",
             range + ": " + std::to_string(count[b]) + (count[b] == 1 ? " shard" : " shards") +
                 (stragglers[b] ? " (" + std::to_string(stragglers[b]) + " stragglers)" : ""));
  }
  const double xm = sx(a.median_s), xt = sx(threshold);
  svg.Line(xm, kTop, xm, top_y + plot_h, "class=\"marker median\"");
  LabelBesideLine(svg, xm, kTop + 12, 0, W, "median " + DurationText(a.median_s));
  svg.Line(xt, kTop + 16, xt, top_y + plot_h, "class=\"marker threshold\"");
  LabelBesideLine(svg, xt, kTop + 28, 0, W, "stragglers beyond " + DurationText(threshold));
  return svg.Finish();
}

std::string MalformedSvg(const RunRecord& r, const RunAnalysis& a) {
  const double plot_h = 120, height = kTop + plot_h + 48;
  const size_t n = std::max<size_t>(1, r.manifest.shards.shards.size());
  uint64_t most = 1;
  for (const auto& [s, c] : a.malformed_by_shard) most = std::max(most, c);
  const double top = NiceCeiling(static_cast<double>(most));
  LinearScale sx{0, static_cast<double>(n), kLeft, kWidth - kRight};
  LinearScale sy{0, top, kTop + plot_h, kTop};
  Svg svg(kWidth, height,
          "Malformed records per shard: " + std::to_string(a.malformed_by_shard.size()) + " of " + std::to_string(n) +
              " shards have some, at most " + std::to_string(most),
          "chart malformed");
  std::vector<double> yt = NiceTicks(0, top, 4);
  yt.erase(std::remove_if(yt.begin(), yt.end(), [](double t) { return t != std::floor(t); }), yt.end());
  svg.YAxis(sy, kLeft, kWidth - kRight, yt, "malformed");
  std::vector<double> xt = NiceTicks(0, static_cast<double>(n), 10);
  xt.erase(std::remove_if(xt.begin(), xt.end(), [](double t) { return t != std::floor(t); }), xt.end());
  svg.XAxis(sx, kTop + plot_h, kTop, xt, "shard index");
  const double w = std::max(1.0, sx(1) - sx(0) - (n <= 200 ? 2 : 0));
  for (const auto& [s, c] : a.malformed_by_shard) {
    svg.Rect(sx(s) + (n <= 200 ? 1 : 0), sy(static_cast<double>(c)), w, sy(0) - sy(static_cast<double>(c)),
             "class=\"bad\" data-shard=\"" + std::to_string(s) + "\"",
             "shard " + std::to_string(s) + " · " + FileName(r.ShardPath(s)) + ": " + GroupedInteger(c) + " malformed");
  }
  return svg.Finish();
}

std::string ScalingSvg(const ScaleResult& s) {
  const double w = 720, left = 70, right = 170, top = 16, plot_h = 300, height = top + plot_h + 52;
  int pmax = 1;
  double smax = 1;
  for (const ScalePoint& p : s.points) {
    pmax = std::max(pmax, p.workers);
    smax = std::max(smax, p.speedup);
  }
  const double ytop = NiceCeiling(std::max<double>(smax, pmax) * 1.05);
  LinearScale sx{0, static_cast<double>(pmax), left, w - right};
  LinearScale sy{0, ytop, top + plot_h, top};
  Svg svg(w, height,
          "Speedup against worker count, with the ideal line and the bound set by shard sizes", "chart scaling");
  std::vector<double> xt = NiceTicks(0, pmax, std::min(pmax + 1, 10));
  xt.erase(std::remove_if(xt.begin(), xt.end(), [](double t) { return t != std::floor(t); }), xt.end());
  svg.YAxis(sy, left, w - right, NiceTicks(0, ytop, 6), "speedup (T1 / Tp)");
  svg.XAxis(sx, top + plot_h, top, xt, "workers");
  svg.Line(sx(0), sy(0), sx(pmax), sy(pmax), "class=\"ideal\"");
  std::vector<std::pair<double, double>> bound, measured;
  for (const ScalePoint& p : s.points) {
    bound.emplace_back(sx(p.workers), sy(std::min<double>(p.workers, p.skew_bound)));
    measured.emplace_back(sx(p.workers), sy(p.speedup));
  }
  const bool with_bound = !s.shard_seconds.empty() && bound.size() > 1;
  if (with_bound) svg.Polyline(bound, "class=\"bound\"");
  svg.Polyline(measured, "class=\"measured\"");
  for (const ScalePoint& p : s.points) {
    std::string title = std::to_string(p.workers) + (p.workers == 1 ? " worker: " : " workers: ") +
                        Fmt("%.3f", p.median_s) + " s median (" + Fmt("%.3f", p.min_s) + "–" +
                        Fmt("%.3f", p.max_s) + "), speedup " + Fmt("%.2f", p.speedup) + ", efficiency " +
                        Fmt("%.0f%%", p.efficiency * 100);
    if (p.karp_flatt) title += ", serial fraction " + Fmt("%.3f", *p.karp_flatt);
    svg.Circle(sx(p.workers), sy(p.speedup), 5, "class=\"point\" data-workers=\"" + std::to_string(p.workers) + "\"",
               title);
    svg.Text(sx(p.workers), sy(p.speedup) - 10, Fmt("%.2fx", p.speedup), "class=\"point-label\" text-anchor=\"middle\"");
  }
  // The series end at the same x: their labels stand in the right margin,
  // past the last point's label, one row each however close the lines end.
  std::vector<std::pair<std::string, double>> labels = {{"ideal (S = p)", sy(pmax)},
                                                        {"measured", measured.back().second}};
  if (with_bound) labels.emplace_back("shard-size bound", bound.back().second);
  std::vector<double> wanted;
  for (const auto& l : labels) wanted.push_back(l.second + 4);
  const std::vector<double> rows = SpreadLabels(wanted, kSeriesFontPx * 1.4, top + kSeriesFontPx, top + plot_h);
  const double label_x = sx(pmax) + 6 + TextWidthEstimate(Fmt("%.2fx", smax), 12) / 2;
  for (size_t i = 0; i < labels.size(); ++i) {
    const std::string& text = labels[i].first;
    const char* cls = text[0] == 'i' ? "ideal-label" : text[0] == 'm' ? "measured-label" : "bound-label";
    svg.Text(label_x, rows[i], text, std::string("class=\"series-label ") + cls + "\"");
  }
  return svg.Finish();
}

}  // namespace fanfold
