// Tests for the progress meter: what it shows, how often, and its clean-up.
#include <doctest/doctest.h>

#include <string>
#include <vector>

#include "coordinator/run/progress_meter.h"

using namespace fanfold;

namespace {

struct FakeOutput : ProgressOutput {
  std::vector<std::string> live, lines;
  int clears = 0;
  void DrawLive(const std::string& t) override { live.push_back(t); }
  void ClearLive() override { ++clears; }
  void Line(const std::string& t) override { lines.push_back(t); }
};

ShardList FourShards() {
  ShardList l;
  for (uint32_t i = 0; i < 4; ++i) {
    Shard s;
    s.index = i;
    s.path = "/data/s" + std::to_string(i) + ".ndjson";
    s.file_size = 100;
    l.shards.push_back(s);
  }
  return l;
}

AttemptRecord Done(uint32_t shard, uint64_t records, uint64_t raw) {
  AttemptRecord r;
  r.shard = shard;
  r.attempt = 1;
  r.outcome = AttemptRecord::Outcome::kDone;
  r.header.records = records;
  r.header.raw_bytes = raw;
  return r;
}

constexpr uint64_t kSec = 1'000'000'000;

}  // namespace

TEST_CASE("status text counts shards, rates, failures and retries, with a byte-based ETA") {
  // Intent: after 1 of 4 equal shards in 1 s, ETA = 1 s × 3/4 ÷ 1/4 = 3 s; rates are per elapsed second.
  ShardList l = FourShards();
  FakeOutput out;
  uint64_t now = 0;
  ProgressMeter m(ProgressMode::kPlain, 5, l, {0, 1, 2, 3}, &out, [&] { return now; });
  now = 1 * kSec;
  m.OnAttempt(Done(0, 2000, 3'000'000));
  CHECK(m.StatusText() ==
        "1/4 shards, 2.00k records/s, 3.0 MB/s, elapsed 0:01, ETA 0:03, 0 failed, 0 retried");
  AttemptRecord died;
  died.shard = 1;
  died.outcome = AttemptRecord::Outcome::kDied;
  died.final = false;
  m.OnAttempt(died);
  died.final = true;
  m.OnAttempt(died);
  const std::string t = m.StatusText();
  CHECK(t.find("1 failed, 1 retried") != std::string::npos);
  CHECK(t.find("ETA 0:01") != std::string::npos);  // half the bytes finished in 1 s
}

TEST_CASE("live mode redraws at most four times a second and erases the line at the end") {
  // Intent: ticks 100 ms apart draw only every 250 ms; Finish clears exactly once.
  ShardList l = FourShards();
  FakeOutput out;
  uint64_t now = 0;
  ProgressMeter m(ProgressMode::kLive, 5, l, {0, 1, 2, 3}, &out, [&] { return now; });
  for (int i = 0; i <= 10; ++i) {
    now = static_cast<uint64_t>(i) * kSec / 10;
    m.Tick();
  }
  // Draws at 0, 0.3, 0.6, 0.9 s (the first tick at or after each 250 ms gap).
  CHECK(out.live.size() == 4);
  CHECK(out.live[0].rfind("[>", 0) == 0);
  CHECK(out.lines.empty());
  m.Finish();
  m.Finish();
  CHECK(out.clears == 1);
}

TEST_CASE("plain mode writes a timestamped line per interval and a last one at the end") {
  // Intent: with 1 s between lines, 2.5 s of ticks give lines at 1 s and 2 s, then one at Finish.
  ShardList l = FourShards();
  FakeOutput out;
  uint64_t now = 0;
  ProgressMeter m(ProgressMode::kPlain, 1, l, {0, 1, 2, 3}, &out, [&] { return now; });
  for (int i = 0; i <= 25; ++i) {
    now = static_cast<uint64_t>(i) * kSec / 10;
    m.Tick();
  }
  REQUIRE(out.lines.size() == 2);
  CHECK(out.lines[0].rfind("fanfold: ", 0) == 0);
  CHECK(out.lines[0].find(" progress: 0/4 shards") != std::string::npos);
  CHECK(out.lines[0].find('Z') != std::string::npos);  // ISO 8601 UTC stamp
  m.Finish();
  CHECK(out.lines.size() == 3);
  CHECK(out.live.empty());
}

TEST_CASE("a short plain run prints nothing; off prints nothing at all") {
  // Intent: no line before the first interval, and none at Finish then; kOff never writes.
  ShardList l = FourShards();
  FakeOutput a, b;
  uint64_t now = 0;
  {
    ProgressMeter m(ProgressMode::kPlain, 5, l, {0}, &a, [&] { return now; });
    now = kSec;
    m.Tick();
  }
  {
    ProgressMeter m(ProgressMode::kOff, 5, l, {0}, &b, [&] { return now; });
    now = 100 * kSec;
    m.Tick();
  }
  CHECK(a.lines.empty());
  CHECK(b.lines.empty());
  CHECK(b.live.empty());
  CHECK(b.clears == 0);
}

TEST_CASE("clock and count text") {
  // Intent: [h:]mm:ss rounding and three significant digits with SI suffixes.
  CHECK(ClockText(0) == "0:00");
  CHECK(ClockText(65.4) == "1:05");
  CHECK(ClockText(3600 * 12 + 7) == "12:00:07");
  CHECK(ClockText(-1) == "--:--");
  CHECK(CompactCount(980) == "980");
  CHECK(CompactCount(12345) == "12.3k");
  CHECK(CompactCount(1'234'567) == "1.23M");
  CHECK(CompactCount(456'000'000) == "456M");
}

TEST_CASE("progress modes parse") {
  // Intent: the four names and nothing else.
  ProgressMode m = ProgressMode::kOff;
  CHECK(ParseProgressMode("plain", &m));
  CHECK(m == ProgressMode::kPlain);
  CHECK(ParseProgressMode("auto", &m));
  CHECK(m == ProgressMode::kAuto);
  CHECK_FALSE(ParseProgressMode("Plain", &m));
  CHECK_FALSE(ParseProgressMode("", &m));
}
