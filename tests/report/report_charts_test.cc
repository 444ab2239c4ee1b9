// Tests for the report's charts: failed attempts stay visible, and no two
// labels of a chart overlap, however the data falls. Label boxes are taken
// from the SVG text (position, anchor, characters) at the page's font sizes;
// the browser test (tests/e2e/test_report_browser.py) measures real ones.
#include <doctest/doctest.h>

#include <regex>
#include <string>
#include <vector>

#include "coordinator/report/report_charts.h"
#include "coordinator/report/svg_chart.h"
#include "tests/rundir/run_record_test_util.h"

using namespace fanfold;

namespace {

struct Box {
  std::string text;
  double x0, x1, y0, y1;
};

// Every <text> of a label class, as a box: width from TextWidthEstimate,
// height the font size above the baseline.
std::vector<Box> LabelBoxes(const std::string& svg) {
  static const std::regex text(R"re(<text x="([-0-9.]+)" y="([-0-9.]+)" class="(marker-label|series-label|point-label)[^"]*"( text-anchor="(\w+)")?>([^<]*)</text>)re");
  std::vector<Box> out;
  for (auto it = std::sregex_iterator(svg.begin(), svg.end(), text); it != std::sregex_iterator(); ++it) {
    const std::smatch& m = *it;
    const double x = std::stod(m[1]), y = std::stod(m[2]);
    const double font = m[3] == "series-label" ? 12.5 : 12;
    const double w = TextWidthEstimate(m[6].str(), font);
    const std::string anchor = m[5];
    const double x0 = anchor == "end" ? x - w : anchor == "middle" ? x - w / 2 : x;
    out.push_back({m[6], x0, x0 + w, y - font, y + 0.25 * font});  // descenders below the baseline
  }
  return out;
}

std::string Overlaps(const std::vector<Box>& boxes) {
  std::string bad;
  for (size_t i = 0; i < boxes.size(); ++i)
    for (size_t j = i + 1; j < boxes.size(); ++j) {
      const Box &a = boxes[i], &b = boxes[j];
      if (a.x0 < b.x1 && b.x0 < a.x1 && a.y0 < b.y1 && b.y0 < a.y1) bad += "'" + a.text + "' / '" + b.text + "'; ";
    }
  return bad;
}

ScaleResult Scale(std::vector<double> speedups, double bound) {
  ScaleResult s;
  s.shard_seconds = {1, 1, 1, 1};
  for (size_t i = 0; i < speedups.size(); ++i) {
    ScalePoint p;
    p.workers = static_cast<int>(i + 1);
    p.speedup = speedups[i];
    p.skew_bound = bound;
    s.points.push_back(p);
  }
  return s;
}

}  // namespace

// Intent: an attempt that died after a nanosecond, between long finished ones, keeps a bar of at least
// 6 px, drawn after every finished bar (so none covers it).
TEST_CASE("charts: a failed attempt's bar stays visible however short") {
  RunRecord r = SampleRecord();
  for (AttemptEntry& a : r.attempts)
    if (!a.done()) a.end_ns = a.start_ns + 1;
  RunAnalysis an = AnalyzeRun(r);
  REQUIRE(an.sessions.size() == 1);
  const std::string svg = TimelineSvg(r, an.sessions[0]);
  static const std::regex bar(R"re(<rect x="([-0-9.]+)" y="[-0-9.]+" width="([-0-9.]+)" height="[-0-9.]+" class="bar (\w+))re");
  std::vector<std::pair<std::string, double>> bars;
  for (auto it = std::sregex_iterator(svg.begin(), svg.end(), bar); it != std::sregex_iterator(); ++it)
    bars.emplace_back((*it)[3], std::stod((*it)[2]));
  REQUIRE(bars.size() == 11);
  CHECK(bars.back().first == "died");
  CHECK(bars.back().second >= 6);
}

// Intent: the median and straggler labels sit above the bars and apart, wherever the two lines fall —
// together at the left, together at the right edge, far apart.
TEST_CASE("charts: histogram marker labels never overlap each other or the bars") {
  for (double slow : {1.0, 0.11, 0.121, 5.0}) {
    RunRecord r = SampleRecord();
    r.attempts[0].end_ns = r.attempts[0].start_ns + static_cast<uint64_t>(slow * 1e9);
    RunAnalysis a = AnalyzeRun(r);
    const std::string svg = ShardTimeHistogramSvg(a);
    std::vector<Box> boxes = LabelBoxes(svg);
    REQUIRE(boxes.size() == 2);
    CHECK_MESSAGE(Overlaps(boxes).empty(), Overlaps(boxes));
    static const std::regex hist(R"re(<rect x="[-0-9.]+" y="([-0-9.]+)"[^>]*class="hist)re");
    for (auto it = std::sregex_iterator(svg.begin(), svg.end(), hist); it != std::sregex_iterator(); ++it)
      for (const Box& b : boxes) CHECK(b.y1 <= std::stod((*it)[1]));
    for (const Box& b : boxes) CHECK((b.x0 >= 0 && b.x1 <= 660));
  }
}

// Intent: the ideal, bound and measured labels get a row each when the lines end at the same height
// (perfect speedup), close together, or apart; the last point's label is not crossed either.
TEST_CASE("charts: scaling series labels never overlap") {
  for (const ScaleResult& s : {Scale({1, 2}, 2), Scale({1, 1.97}, 1.99), Scale({1, 1.2, 1.3, 4}, 4),
                               Scale({1, 1.5}, 1.6), Scale({1, 0.9}, 2)}) {
    std::vector<Box> boxes = LabelBoxes(ScalingSvg(s));
    REQUIRE(boxes.size() == s.points.size() + 3);
    CHECK_MESSAGE(Overlaps(boxes).empty(), Overlaps(boxes));
  }
}
