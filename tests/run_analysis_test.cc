// Tests for the report's analysis of a run record and for the HTML it renders.
#include <doctest/doctest.h>

#include <numeric>
#include <regex>

#include "coordinator/report_html.h"
#include "coordinator/run_analysis.h"

using namespace fanfold;

namespace {

// Ten shards on two workers; shard 9 takes 10× the others; shard 3 has a retry.
RunRecord SampleRecord() {
  RunRecord r;
  r.dir = "/runs/x";
  r.manifest.job_path = "/jobs/x.json";
  r.manifest.fingerprint = "00ff";
  for (uint32_t i = 0; i < 10; ++i) {
    Shard s;
    s.index = i;
    s.path = "/d/s" + std::to_string(i) + ".ndjson.zst";
    r.manifest.shards.shards.push_back(s);
  }
  RunSession session;
  session.workers = 2;
  session.start_ns = 1'000'000'000;
  r.sessions.push_back(session);
  uint64_t t[2] = {session.start_ns, session.start_ns};
  auto add = [&](uint32_t shard, int worker, uint64_t ns, const char* outcome, bool final, uint32_t attempt) {
    AttemptEntry a;
    a.shard = shard;
    a.attempt = attempt;
    a.worker = worker;
    a.start_ns = t[worker];
    a.end_ns = t[worker] + ns;
    t[worker] = a.end_ns;
    a.outcome = outcome;
    a.final = final;
    if (a.done()) {
      a.records = 1000;
      a.kept = 990;
      a.malformed = shard == 4 ? 7 : 0;
      a.bytes_raw = 1'000'000;
      a.read_ns = ns / 4, a.parse_ns = ns / 2, a.aggregate_ns = ns / 8, a.encode_ns = ns / 8;
    } else {
      a.message = "worker exited";
    }
    r.attempts.push_back(a);
  };
  add(9, 0, 1'000'000'000, "done", true, 1);
  for (uint32_t s = 0; s < 9; ++s) {
    if (s == 3) add(3, 1, 50'000'000, "died", false, 1);
    add(s, 1, 100'000'000, "done", true, s == 3 ? 2 : 1);
  }
  return r;
}

}  // namespace

TEST_CASE("type 7 quantiles") {
  // Intent: Hyndman & Fan (1996) type 7 on 1..8 gives quartiles 2.75, 4.5, 6.25 (docs/REFERENCES).
  std::vector<double> x = {1, 2, 3, 4, 5, 6, 7, 8};
  CHECK(QuantileType7(x, 0.25) == doctest::Approx(2.75));
  CHECK(QuantileType7(x, 0.5) == doctest::Approx(4.5));
  CHECK(QuantileType7(x, 0.75) == doctest::Approx(6.25));
  CHECK(QuantileType7(x, 1.0) == 8);
  CHECK(QuantileType7({}, 0.5) == 0);
}

TEST_CASE("analysis: totals from the journal, the straggler, lanes and throughput") {
  // Intent: without summary.json the totals add up final done attempts; the 10× shard is the one straggler.
  RunRecord r = SampleRecord();
  RunAnalysis a = AnalyzeRun(r);
  CHECK_FALSE(a.totals.from_summary);
  CHECK(a.totals.shards_done == 10);
  CHECK(a.totals.retries == 1);
  CHECK(a.totals.records_read == 10'000);
  CHECK(a.totals.records_malformed == 7);
  CHECK(a.status == "unfinished");
  CHECK(a.straggler_count == 1);
  REQUIRE(!a.slowest.empty());
  CHECK(a.slowest[0].shard == 9);
  CHECK(a.slowest[0].straggler);
  CHECK(a.median_s == doctest::Approx(0.1));
  REQUIRE(a.sessions.size() == 1);
  CHECK(a.sessions[0].lanes == 2);
  CHECK(a.sessions[0].attempts.size() == 11);
  // Throughput bins conserve the bytes: Σ MB/s × bin width = 10 MB.
  const auto& v = a.sessions[0];
  double mb = std::accumulate(v.mb_per_s.begin(), v.mb_per_s.end(), 0.0) * v.bin_s;
  CHECK(mb == doctest::Approx(10.0).epsilon(1e-9));
  REQUIRE(a.malformed_by_shard.size() == 1);
  CHECK(a.malformed_by_shard[0] == std::make_pair(4u, uint64_t{7}));
  std::vector<std::string> text = FormatReportText(r, a);
  CHECK(text.size() >= 4);
  CHECK(text[2].find("10,000 read") != std::string::npos);
  CHECK(text[3].find("slowest: shard 9") != std::string::npos);
}

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
