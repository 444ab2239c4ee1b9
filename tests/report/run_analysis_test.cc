// Tests for the report's analysis of a run record.
#include <doctest/doctest.h>

#include <numeric>

#include "coordinator/report/run_analysis.h"
#include "tests/rundir/run_record_test_util.h"

using namespace fanfold;

TEST_CASE("type 7 quantiles") {
  // Intent: Hyndman & Fan (1996) type 7 on 1..8 gives quartiles 2.75, 4.5, 6.25 (worked example of the shared test references).
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

TEST_CASE("analysis: sub-millisecond shards never flag one another as stragglers") {
  // Intent: 300 shards of 0.5 ms and one of 5 ms: ten times the median and far above Tukey's fence, but
  // only 4.5 ms longer than the median, under the 20 ms floor; a 30 ms one is a straggler.
  for (uint64_t slow_ns : {5'000'000ull, 30'000'000ull}) {
    RunRecord r = SampleRecord();
    r.attempts.clear();
    r.manifest.shards.shards.resize(301);
    for (uint32_t s = 0; s < 301; ++s) {
      AttemptEntry a;
      a.shard = s;
      a.attempt = 1;
      a.worker = static_cast<int>(s % 2);
      a.start_ns = 1'000'000'000 + s * 1'000'000ull;
      a.end_ns = a.start_ns + (s == 7 ? slow_ns : 500'000);
      a.outcome = "done";
      a.final = true;
      r.attempts.push_back(a);
    }
    RunAnalysis an = AnalyzeRun(r);
    CHECK(an.median_s == doctest::Approx(0.0005));
    CHECK(an.straggler_count == (slow_ns > 20'000'000 ? 1u : 0u));
  }
}

TEST_CASE("analysis: a resumed run's rate is over the shards it processed") {
  // Intent: a second session that reused 8 shards and processed 2 (1 MB each
  // in 0.5 s) reports 2 MB / 0.5 s = 4.0 MB/s, not all 10 MB over that time.
  RunRecord r = SampleRecord();
  RunSession resume;
  resume.mode = "resume";
  resume.workers = 2;
  resume.reused = 8;
  resume.start_ns = 10'000'000'000;
  resume.end_ns = 10'500'000'000;
  r.sessions.push_back(resume);
  for (uint32_t s : {3u, 9u}) {
    AttemptEntry a;
    a.shard = s;
    a.attempt = 1;
    a.worker = static_cast<int>(s % 2);
    a.start_ns = 10'100'000'000;
    a.end_ns = 10'400'000'000;
    a.outcome = "done";
    a.records = 1000;
    a.bytes_raw = 1'000'000;
    a.session = 1;
    r.attempts.push_back(a);
  }
  RunAnalysis a = AnalyzeRun(r);
  CHECK(a.totals.shards_reused == 8);
  CHECK(a.totals.processed_shards == 2);
  CHECK(a.totals.processed_bytes_decompressed == 2'000'000);
  CHECK(a.totals.processed_seconds == doctest::Approx(0.5));
  CHECK(ProcessedRateText(a.totals) == "processed: 2.0 MB decompressed in 0.50 s, 4.0 MB/s");
  // Intent: a summary.json that counts the processed shards is taken as it is.
  r.summary.present = true;
  r.summary.shards_reused = 8;
  r.summary.wall_seconds = 0.25;
  r.summary.has_processed = true;
  r.summary.processed_shards = 2;
  r.summary.processed_bytes_decompressed = 2'000'000;
  CHECK(ProcessedRateText(AnalyzeRun(r).totals) == "processed: 2.0 MB decompressed in 0.25 s, 8.0 MB/s");
}

TEST_CASE("analysis: the phases say whether they were measured") {
  // Intent: journal lines with "phases":"measured" give "measured" and the share of the attempts'
  // time they fill (3/4 + 1/8 of each attempt: 87.5%); lines without it are called estimates.
  RunRecord r = SampleRecord();
  for (AttemptEntry& e : r.attempts) e.phases_measured = true;
  CHECK(PhasesProvenance(AnalyzeRun(r)) == "measured; they fill 100.0% of the attempts' time");
  for (AttemptEntry& e : r.attempts) e.encode_ns = 0;
  CHECK(PhasesProvenance(AnalyzeRun(r)) == "measured; they fill 87.5% of the attempts' time");
  r.attempts[0].phases_measured = false;
  CHECK(PhasesProvenance(AnalyzeRun(r)) ==
        "estimated for 1 of 10 attempts: journal lines that predate measured phases");
  for (AttemptEntry& e : r.attempts) e.phases_measured = false;
  CHECK(PhasesProvenance(AnalyzeRun(r)) == "estimated, not measured: the journal predates measured phases");
  const std::vector<std::string> text = FormatReportText(r, AnalyzeRun(r));
  CHECK(text[4].rfind("worker time: ", 0) == 0);
  CHECK(text[4].find("(estimated, not measured") != std::string::npos);
}
