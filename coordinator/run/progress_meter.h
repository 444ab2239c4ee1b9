// ProgressMeter: what a running job shows on stderr — shards done/total,
// records/s, MB/s (decompressed), elapsed, ETA, failed and retried shards.
// Live mode redraws one line at most four times a second and erases it at
// the end; plain mode (stderr not a terminal, or asked for) writes a
// timestamped line every few seconds; off writes nothing. Fed by the run
// loop's callbacks (OnAttempt, Tick) on the coordinator thread; not
// thread-safe. Never writes to stdout.
#pragma once

#include <cstdint>
#include <functional>
#include <string>
#include <string_view>
#include <vector>

#include "common/job/shard_list.h"
#include "coordinator/run/progress_mode.h"
#include "coordinator/run/run_loop.h"

namespace fanfold {

// Where the meter's text goes; the default is the console (stderr).
class ProgressOutput {
 public:
  virtual ~ProgressOutput() = default;
  virtual void DrawLive(const std::string& text) = 0;  // replaces the live line
  virtual void ClearLive() = 0;
  virtual void Line(const std::string& text) = 0;  // one plain line
  // Columns the live line may use; 0 = no limit known.
  virtual size_t Columns() const { return 0; }
};

class ProgressMeter {
 public:
  using Clock = std::function<uint64_t()>;  // monotonic ns

  // mode kAuto resolves to kLive iff stderr is a live terminal, else kPlain.
  // `pending` are the shards this run processes (indices into list), whose
  // bytes give the ETA. plain_every_s: seconds between plain lines.
  // output/clock: null/empty = console and steady_clock (tests pass fakes;
  // a given output must outlive the meter).
  ProgressMeter(ProgressMode mode, double plain_every_s, const ShardList& list,
                const std::vector<uint32_t>& pending, ProgressOutput* output = nullptr, Clock clock = {});
  ~ProgressMeter();
  ProgressMeter(const ProgressMeter&) = delete;
  ProgressMeter& operator=(const ProgressMeter&) = delete;

  ProgressMode mode() const { return mode_; }

  // A finished attempt (run loop on_attempt).
  void OnAttempt(const AttemptRecord& r);
  // Between events (run loop on_idle): redraws or prints when due.
  void Tick();
  // The run is over: erases the live line; in plain mode, a last line if
  // any line was printed. Idempotent.
  void Finish();

  // The status text now, without timestamp or colour (tests, plain lines).
  std::string StatusText() const;

 private:
  std::string LiveText() const;
  uint64_t Now() const;

  ProgressMode mode_;
  uint64_t plain_every_ns_;
  ProgressOutput* out_;
  ProgressOutput* owned_ = nullptr;
  Clock clock_;
  bool color_ = false;
  bool finished_ = false;
  bool printed_plain_ = false;
  uint64_t start_ns_ = 0;
  uint64_t last_draw_ns_ = 0;
  bool drawn_ = false;

  uint64_t shards_total_ = 0;
  uint64_t bytes_total_ = 0;  // input bytes of the pending shards
  std::vector<uint64_t> shard_bytes_;  // by shard index
  uint64_t shards_done_ = 0;
  uint64_t shards_failed_ = 0;
  uint64_t retries_ = 0;
  uint64_t bytes_finished_ = 0;  // input bytes of shards done or failed
  uint64_t records_ = 0;
  uint64_t raw_bytes_ = 0;
};

// "1:05", "12:00:07": whole seconds as [h:]mm:ss.
std::string ClockText(double seconds);
// "980", "12.3k", "1.23M": a rate with an SI suffix, three significant digits.
std::string CompactCount(double value);

}  // namespace fanfold
