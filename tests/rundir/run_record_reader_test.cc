// Tests for reading a run directory's journal and summary back.
#include <doctest/doctest.h>

#include <unistd.h>

#include <cstdio>
#include <filesystem>
#include <fstream>

#include <nlohmann/json.hpp>

#include "coordinator/cli/report_command.h"
#include "coordinator/rundir/run_record_reader.h"

using namespace fanfold;

namespace {

const char kJournal[] =
    R"({"event":"start","mode":"run","pid":1,"workers":2,"pending":3,"reused":0,"time_ns":1000})"
    "\n"
    R"({"event":"attempt","shard":1,"attempt":1,"worker":0,"start_ns":1100,"end_ns":2100,"outcome":"done","final":true,"records":10,"kept":9,"malformed":1,"bytes_in":50,"bytes_raw":400,"read_ns":100,"parse_ns":200,"aggregate_ns":300,"encode_ns":4})"
    "\n"
    R"({"event":"attempt","shard":0,"attempt":1,"worker":1,"start_ns":1050,"end_ns":1500,"outcome":"died","final":false,"message":"worker exited"})"
    "\n"
    R"({"event":"attempt","shard":0,"attempt":2,"worker":1,"start_ns":1600,"end_ns":2600,"outcome":"done","final":true,"records":5,"kept":5,"malformed":0,"bytes_in":20,"bytes_raw":200,"read_ns":1,"parse_ns":2,"aggregate_ns":3,"encode_ns":4})"
    "\n"
    R"({"event":"finish","time_ns":3000,"failed":0})"
    "\n";

}  // namespace

TEST_CASE("journal: sessions, attempts with timings, and a torn last line ignored") {
  // Intent: a crash mid-append leaves a partial line; it is dropped with a note, not an error.
  RunRecord r;
  std::string text = std::string(kJournal) + R"({"event":"attempt","shard":2,"att)";
  ParseJournal(text, "journal.ndjson", &r);
  REQUIRE(r.sessions.size() == 1);
  CHECK(r.sessions[0].workers == 2);
  CHECK(r.sessions[0].finished);
  CHECK(r.sessions[0].end_ns == 3000);
  REQUIRE(r.attempts.size() == 3);
  CHECK(r.attempts[0].shard == 1);
  CHECK(r.attempts[0].parse_ns == 200);
  CHECK(r.attempts[0].malformed == 1);
  CHECK(r.attempts[0].seconds() == doctest::Approx(1000e-9));
  CHECK_FALSE(r.attempts[1].final);
  CHECK(r.attempts[1].message == "worker exited");
  REQUIRE(r.warnings.size() == 1);
  CHECK(r.warnings[0].find("line 6: cut short") != std::string::npos);
}

TEST_CASE("journal: a bad line in the middle is skipped with a warning; resume opens a second session") {
  // Intent: the reader never fails on journal content and attributes attempts to their session.
  RunRecord r;
  std::string text = std::string(kJournal) + "garbage\n" +
                     R"({"event":"start","mode":"resume","workers":1,"time_ns":9000})" "\n" +
                     R"({"event":"attempt","shard":2,"attempt":1,"worker":0,"start_ns":9100,"end_ns":9200,"outcome":"failed","final":true,"message":"bad frame"})" "\n" +
                     R"({"event":"interrupted","time_ns":9300})" "\n";
  ParseJournal(text, "j", &r);
  REQUIRE(r.sessions.size() == 2);
  CHECK(r.sessions[1].mode == "resume");
  CHECK(r.sessions[1].interrupted);
  REQUIRE(r.attempts.size() == 4);
  CHECK(r.attempts[3].session == 1);
  CHECK(r.attempts[3].outcome == "failed");
  REQUIRE(r.warnings.size() == 1);
  CHECK(r.warnings[0].find("line 6: not a journal event") != std::string::npos);
}

TEST_CASE("summary.json fields are read; a broken file is an error") {
  // Intent: the fields ExecuteRun writes (docs/run-directory.md) land in SummaryRecord.
  const char* text = R"({"job":"/j.json","plan":"abc","run_dir":"/r","workers":2,
    "shards":{"total":3,"done":2,"failed":1,"reused":0,"retries":1},
    "records":{"read":15,"kept":14,"malformed":1},"bytes":{"compressed":70,"decompressed":600},
    "wall_seconds":0.25,"failed":[{"shard":2,"path":"/c","attempts":1,"reason":"bad frame"}],
    "malformed_samples":[{"shard":1,"path":"/b","line":7,"reason":"truncated"}],
    "skipped":{"watts":3},"output":"stdout"})";
  SummaryRecord s;
  REQUIRE(ParseSummary(text, "summary.json", &s).ok());
  CHECK(s.present);
  CHECK(s.shards_failed == 1);
  CHECK(s.retries == 1);
  CHECK(s.records_kept == 14);
  CHECK(s.bytes_decompressed == 600);
  CHECK(s.wall_seconds == 0.25);
  REQUIRE(s.failed.size() == 1);
  CHECK(s.failed[0].reason == "bad frame");
  REQUIRE(s.samples.size() == 1);
  CHECK(s.samples[0].line == 7);
  CHECK(s.skipped.at("watts") == 3);
  SummaryRecord bad;
  CHECK_FALSE(ParseSummary("{\"shards\":", "summary.json", &bad).ok());
}

TEST_CASE("ReadRunRecord needs run.json and tolerates a missing summary; timings export is start-ordered") {
  // Intent: an unfinished run directory reads fine; TimingsJson lists every attempt with its shard path.
  namespace fs = std::filesystem;
  fs::path dir = fs::temp_directory_path() / ("fanfold-rrr-test-" + std::to_string(::getpid()));
  fs::remove_all(dir);
  fs::create_directories(dir);
  CHECK_FALSE(ReadRunRecord(dir.string()).ok());
  {
    std::ofstream(dir / "run.json") << R"({"fanfold_run":1,"job":"/j.json","format":"ndjson","plan":"00ff",
      "plan_text":"p","created":"2026-01-01T00:00:00Z","shards":[
      {"index":0,"path":"/d/a.ndjson","size":10,"mtime_ns":1,"compression":"none"},
      {"index":1,"path":"/d/b.ndjson","size":10,"mtime_ns":1,"compression":"none"}]})";
    std::ofstream(dir / "journal.ndjson") << kJournal;
  }
  Result<RunRecord> r = ReadRunRecord(dir.string());
  REQUIRE(r.ok());
  CHECK_FALSE(r->summary.present);
  CHECK(r->attempts.size() == 3);
  nlohmann::json t = nlohmann::json::parse(TimingsJson(*r));
  REQUIRE(t.is_array());
  REQUIRE(t.size() == 3);
  CHECK(t[0]["shard"] == 0);  // started first (1050 ns)
  CHECK(t[0]["outcome"] == "died");
  CHECK(t[0]["message"] == "worker exited");
  CHECK(t[1]["path"] == "/d/b.ndjson");
  CHECK(t[1]["wall_ns"] == 1000);
  CHECK(t[1]["aggregate_ns"] == 300);
  CHECK_FALSE(t[1].contains("message"));
  fs::remove_all(dir);
}
