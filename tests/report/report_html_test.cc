// Tests for the HTML page of `fanfold report`.
#include <doctest/doctest.h>

#include <regex>

#include "coordinator/report/report_html.h"
#include "coordinator/report/run_analysis.h"
#include "coordinator/report/scale_result.h"
#include "tests/rundir/run_record_test_util.h"

using namespace fanfold;

TEST_CASE("HTML: one bar per attempt, summary numbers tagged, nothing external") {
  // Intent: the page the browser test checks — data-attempt per attempt, data-summary values, no URLs to fetch.
  RunRecord r = SampleRecord();
  r.summary.present = true;
  r.summary.shards_total = 10;
  r.summary.shards_done = 10;
  r.summary.records_read = 10'000;
  r.summary.wall_seconds = 1.5;
  r.summary.workers = 2;
  RunAnalysis a = AnalyzeRun(r);
  const std::string html = RenderReportHtml(r, a, nullptr);
  const std::regex bar("data-attempt=\"");
  CHECK(std::distance(std::sregex_iterator(html.begin(), html.end(), bar), std::sregex_iterator()) == 11);
  CHECK(html.find("data-summary=\"records.read\" data-value=\"10000\">10,000<") != std::string::npos);
  CHECK(html.find("data-summary=\"wall_seconds\" data-value=\"1.5\"") != std::string::npos);
  CHECK(html.find("data-outcome=\"died\"") != std::string::npos);
  CHECK(html.find("src=") == std::string::npos);
  CHECK(html.find("<link") == std::string::npos);
  CHECK(html.find("@import") == std::string::npos);
  // The only URL is the SVG namespace (an identifier, never fetched).
  std::string rest = html;
  for (size_t at; (at = rest.find("http://www.w3.org/2000/svg")) != std::string::npos;) rest.erase(at, 26);
  CHECK(rest.find("http") == std::string::npos);
  CHECK(html.find("(straggler)") != std::string::npos);
}

TEST_CASE("HTML: the scaling section draws one point per worker count") {
  // Intent: a scale result adds its chart and table; the standalone scale page has them too.
  RunRecord r = SampleRecord();
  RunAnalysis a = AnalyzeRun(r);
  ScaleResult s;
  for (auto [workers, wall] : {std::pair{1, 2.0}, std::pair{2, 1.2}}) {
    ScalePoint p;
    p.workers = workers;
    p.wall_seconds = {wall};
    s.points.push_back(p);
  }
  s.shard_seconds = {1, 1};
  ComputeScaleDerived(&s);
  for (const std::string& page : {RenderReportHtml(r, a, &s), RenderScaleHtml(s)}) {
    CHECK(page.find("id=\"scaling\"") != std::string::npos);
    CHECK(page.find("class=\"point\" data-workers=\"1\"") != std::string::npos);
    CHECK(page.find("class=\"point\" data-workers=\"2\"") != std::string::npos);
    CHECK(page.find("0.200") != std::string::npos);  // Karp-Flatt: (1.2/2 - 0.5)/0.5
  }
  CHECK(RenderReportHtml(r, a, nullptr).find("id=\"scaling\"") == std::string::npos);
}
