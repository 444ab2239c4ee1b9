// RunJournal: the exact bytes of each event line (journals on disk and the
// e2e tests read them; keys as docs/run-directory.md lists them), and the
// reader taking back what the writer wrote.
#include "coordinator/rundir/run_journal.h"

#include <string>
#include <vector>

#include <doctest/doctest.h>

namespace fanfold {
namespace {

AttemptRecord DoneAttempt() {
  AttemptRecord r;
  r.shard = 4;
  r.attempt = 2;
  r.worker = 1;
  r.start_ns = 1'700'000'000'000'000'000;
  r.end_ns = 1'700'000'000'250'000'000;
  r.outcome = AttemptRecord::Outcome::kDone;
  r.final = true;
  r.header.records = 10;
  r.header.kept = 9;
  r.header.malformed = 1;
  r.header.compressed_bytes = 50;
  r.header.raw_bytes = 400;
  r.header.read_ns = 100;
  r.header.parse_ns = 200;
  r.header.aggregate_ns = 300;
  r.header.encode_ns = 4;
  return r;
}

// Intent: a done attempt's line, byte for byte: the documented keys in their
// on-disk order, the worker's counts and timings from the partial header.
TEST_CASE("run_journal: a done attempt's exact line") {
  CHECK(AttemptEventLine(DoneAttempt()) ==
        R"({"event":"attempt","shard":4,"attempt":2,"worker":1,"start_ns":1700000000000000000,)"
        R"("end_ns":1700000000250000000,"outcome":"done","final":true,"records":10,"kept":9,"malformed":1,)"
        R"("bytes_in":50,"bytes_raw":400,"read_ns":100,"parse_ns":200,"aggregate_ns":300,"encode_ns":4,)"
        R"("phases":"measured"})");
}

// Intent: a failed attempt carries its message instead of counts, escaped as
// RFC 8259 §7 requires (quote, backslash, control characters); each outcome
// has its documented name.
TEST_CASE("run_journal: failed attempts carry an escaped message and their outcome name") {
  AttemptRecord r;
  r.shard = 0;
  r.attempt = 1;
  r.worker = 0;
  r.start_ns = 5;
  r.end_ns = 6;
  r.final = false;
  r.message = "exit 70: \"bad\"\\\nline";
  const std::pair<AttemptRecord::Outcome, const char*> names[] = {{AttemptRecord::Outcome::kFailed, "failed"},
                                                                  {AttemptRecord::Outcome::kDied, "died"},
                                                                  {AttemptRecord::Outcome::kTimedOut, "timed-out"},
                                                                  {AttemptRecord::Outcome::kRejected, "rejected"}};
  for (const auto& [outcome, name] : names) {
    r.outcome = outcome;
    CHECK(AttemptEventLine(r) ==
          std::string(R"({"event":"attempt","shard":0,"attempt":1,"worker":0,"start_ns":5,"end_ns":6,"outcome":")") +
              name + R"(","final":false,"message":"exit 70: \"bad\"\\\nline"})");
  }
}

// Intent: the session lines keep the alphabetical key order they have on disk.
TEST_CASE("run_journal: start, interrupted and finish lines") {
  CHECK(StartEventLine("resume", 4242, 3, 7, 2, 99) ==
        R"({"event":"start","mode":"resume","pending":7,"pid":4242,"reused":2,"time_ns":99,"workers":3})");
  CHECK(InterruptedEventLine(123) == R"({"event":"interrupted","time_ns":123})");
  CHECK(FinishEventLine(456, 1) == R"({"event":"finish","failed":1,"time_ns":456})");
}

// Intent: what the writer writes, the reader reads back field for field.
TEST_CASE("run_journal: written lines read back") {
  AttemptRecord died;
  died.shard = 4;
  died.attempt = 1;
  died.worker = 0;
  died.start_ns = 1000;
  died.end_ns = 1500;
  died.outcome = AttemptRecord::Outcome::kDied;
  died.final = false;
  died.message = "worker exited with signal 9";
  const std::string text = StartEventLine("run", 1, 2, 1, 0, 900) + "\n" + AttemptEventLine(died) + "\n" +
                           AttemptEventLine(DoneAttempt()) + "\n" + FinishEventLine(1'700'000'000'300'000'000, 0) +
                           "\n";
  std::vector<RunSession> sessions;
  std::vector<AttemptEntry> attempts;
  std::vector<std::string> warnings;
  ParseJournal(text, "journal.ndjson", &sessions, &attempts, &warnings);
  CHECK(warnings.empty());
  REQUIRE(sessions.size() == 1);
  CHECK(sessions[0].mode == "run");
  CHECK(sessions[0].workers == 2);
  CHECK(sessions[0].pending == 1);
  CHECK(sessions[0].start_ns == 900);
  CHECK(sessions[0].finished);
  CHECK(sessions[0].end_ns == 1'700'000'000'300'000'000);
  REQUIRE(attempts.size() == 2);
  CHECK(attempts[0].outcome == "died");
  CHECK(attempts[0].message == "worker exited with signal 9");
  CHECK_FALSE(attempts[0].final);
  const AttemptEntry& d = attempts[1];
  CHECK(d.done());
  CHECK(d.shard == 4);
  CHECK(d.attempt == 2);
  CHECK(d.worker == 1);
  CHECK(d.end_ns - d.start_ns == 250'000'000);
  CHECK(d.records == 10);
  CHECK(d.kept == 9);
  CHECK(d.malformed == 1);
  CHECK(d.bytes_in == 50);
  CHECK(d.bytes_raw == 400);
  CHECK(d.read_ns + d.parse_ns + d.aggregate_ns + d.encode_ns == 604);
  CHECK(d.phases_measured);
  CHECK(d.message.empty());
}

// Intent: the export form lists every count even for a failed attempt, and
// a message only for attempts that are not done.
TEST_CASE("run_journal: AttemptEntryJson fields") {
  AttemptEntry a;
  a.outcome = "died";
  a.message = "gone";
  nlohmann::json j = AttemptEntryJson(a);
  CHECK(j.size() == 17);
  CHECK(j.at("records") == 0);
  CHECK(j.at("message") == "gone");
  a.outcome = "done";
  j = AttemptEntryJson(a);
  CHECK(j.size() == 17);
  CHECK_FALSE(j.contains("message"));
  CHECK(j.at("phases") == "estimated");  // a journal line without "phases"
  a.phases_measured = true;
  CHECK(AttemptEntryJson(a).at("phases") == "measured");
}

// Intent: a done attempt from a journal written before the phases were
// measured (no "phases" key) reads back as estimated, not as measured.
TEST_CASE("run_journal: an attempt line without phases is an estimate") {
  const std::string text =
      R"({"event":"attempt","shard":0,"attempt":1,"worker":0,"start_ns":5,"end_ns":9,"outcome":"done","final":true,)"
      R"("records":1,"kept":1,"malformed":0,"bytes_in":3,"bytes_raw":3,"read_ns":1,"parse_ns":0,"aggregate_ns":2,"encode_ns":1})"
      "\n";
  std::vector<RunSession> sessions;
  std::vector<AttemptEntry> attempts;
  std::vector<std::string> warnings;
  ParseJournal(text, "journal.ndjson", &sessions, &attempts, &warnings);
  REQUIRE(attempts.size() == 1);
  CHECK(attempts[0].done());
  CHECK_FALSE(attempts[0].phases_measured);
}

// Intent: a refreshed run's generations read back from its journal: the
// first run is generation 1 (its pending shards computed), each generation
// event the next with its counts and files, each ending at the first finish
// after it (none: not finished); sessions know their generation.
TEST_CASE("run_journal: generations") {
  GenerationEntry g;
  g.generation = 2;
  g.time_ns = 5000;
  g.reused = 7;
  g.computed = 2;
  g.dropped = 1;
  g.computed_paths = {"/d/h08", "/d/h09"};
  g.dropped_paths = {"/d/h03"};
  const std::string text = StartEventLine("run", 1, 2, 8, 0, 1000) + "\n" + FinishEventLine(2000, 0) + "\n" +
                           GenerationEventLine(g) + "\n" + StartEventLine("refresh", 2, 2, 2, 7, 5001) + "\n" +
                           FinishEventLine(9000, 0) + "\n" + GenerationEventLine(GenerationEntry{3, 10000}) + "\n";
  std::vector<GenerationEntry> gens = ParseGenerations(text);
  REQUIRE(gens.size() == 3);
  CHECK(gens[0].generation == 1);
  CHECK(gens[0].computed == 8);
  CHECK(gens[0].end_ns == 2000);
  CHECK(gens[1].generation == 2);
  CHECK(gens[1].reused == 7);
  CHECK(gens[1].dropped == 1);
  CHECK(gens[1].computed_paths == g.computed_paths);
  CHECK(gens[1].dropped_paths == g.dropped_paths);
  CHECK(gens[1].end_ns == 9000);
  CHECK(gens[1].seconds() == doctest::Approx(4e-6));
  CHECK(gens[2].generation == 3);
  CHECK(gens[2].end_ns == 0);
  std::vector<RunSession> sessions;
  std::vector<AttemptEntry> attempts;
  std::vector<std::string> warnings;
  ParseJournal(text, "journal.ndjson", &sessions, &attempts, &warnings);
  REQUIRE(sessions.size() == 2);
  CHECK(sessions[0].generation == 1);
  CHECK(sessions[1].generation == 2);
  CHECK(sessions[1].mode == "refresh");
  CHECK(warnings.empty());
}

}  // namespace
}  // namespace fanfold
