#include "coordinator/run/progress_meter.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <ctime>

#include "common/port/clock.h"
#include "coordinator/run/console_log.h"

namespace fanfold {
namespace {

constexpr uint64_t kLiveEveryNs = 250'000'000;  // at most four redraws a second
constexpr int kBarWidth = 20;

class ConsoleOutput final : public ProgressOutput {
 public:
  void DrawLive(const std::string& text) override { DrawLiveLine(text); }
  void ClearLive() override { ClearLiveLine(); }
  void Line(const std::string& text) override { WriteConsoleLine(text); }
  size_t Columns() const override { return ConsoleColumns(); }
};

std::string UtcStamp() {
  std::time_t t = std::time(nullptr);
  char buf[32];
  std::strftime(buf, sizeof buf, "%Y-%m-%dT%H:%M:%SZ", std::gmtime(&t));
  return buf;
}

const char* OutcomeWord(AttemptRecord::Outcome o) {
  switch (o) {
    case AttemptRecord::Outcome::kDone: return "done";
    case AttemptRecord::Outcome::kFailed: return "failed";
    case AttemptRecord::Outcome::kDied: return "worker died";
    case AttemptRecord::Outcome::kTimedOut: return "timed out";
    case AttemptRecord::Outcome::kRejected: return "partial rejected";
  }
  return "?";
}

}  // namespace

std::string ClockText(double seconds) {
  if (!(seconds >= 0) || seconds > 1e9) return "--:--";
  const uint64_t s = static_cast<uint64_t>(seconds + 0.5);
  char buf[32];
  if (s >= 3600)
    std::snprintf(buf, sizeof buf, "%llu:%02llu:%02llu", static_cast<unsigned long long>(s / 3600),
                  static_cast<unsigned long long>(s / 60 % 60), static_cast<unsigned long long>(s % 60));
  else
    std::snprintf(buf, sizeof buf, "%llu:%02llu", static_cast<unsigned long long>(s / 60),
                  static_cast<unsigned long long>(s % 60));
  return buf;
}

std::string CompactCount(double v) {
  char buf[32];
  if (!(v >= 0)) v = 0;
  const char* suffix = "";
  if (v >= 1e9) v /= 1e9, suffix = "G";
  else if (v >= 1e6) v /= 1e6, suffix = "M";
  else if (v >= 1e3) v /= 1e3, suffix = "k";
  else {
    std::snprintf(buf, sizeof buf, "%.0f", v);
    return buf;
  }
  std::snprintf(buf, sizeof buf, v >= 100 ? "%.0f%s" : v >= 10 ? "%.1f%s" : "%.2f%s", v, suffix);
  return buf;
}

ProgressMeter::ProgressMeter(ProgressMode mode, double plain_every_s, const ShardList& list,
                             const std::vector<uint32_t>& pending, ProgressOutput* output, Clock clock)
    : mode_(mode), out_(output), clock_(std::move(clock)) {
  if (mode_ == ProgressMode::kAuto) mode_ = StderrIsLiveTerminal() ? ProgressMode::kLive : ProgressMode::kPlain;
  if (!out_) out_ = owned_ = new ConsoleOutput;
  color_ = output == nullptr && mode_ == ProgressMode::kLive && StderrWantsColor();
  plain_every_ns_ = static_cast<uint64_t>(std::max(0.05, plain_every_s) * 1e9);
  shard_bytes_.assign(list.shards.size(), 0);
  for (uint32_t s : pending) {
    if (s >= list.shards.size()) continue;
    shard_bytes_[s] = list.shards[s].bytes();
    bytes_total_ += shard_bytes_[s];
  }
  shards_total_ = pending.size();
  start_ns_ = last_draw_ns_ = Now();
}

ProgressMeter::~ProgressMeter() {
  Finish();
  delete owned_;
}

uint64_t ProgressMeter::Now() const { return clock_ ? clock_() : MonotonicNanos(); }

void ProgressMeter::OnAttempt(const AttemptRecord& r) {
  const bool done = r.outcome == AttemptRecord::Outcome::kDone;
  if (done) {
    ++shards_done_;
    records_ += r.header.records;
    raw_bytes_ += r.header.raw_bytes;
  } else if (r.final) {
    ++shards_failed_;
  } else {
    ++retries_;
  }
  if (r.final && r.shard < shard_bytes_.size()) bytes_finished_ += shard_bytes_[r.shard];
  if (CurrentLogLevel() == LogLevel::kDebug) {
    char ms[32];
    std::snprintf(ms, sizeof ms, "%.1f ms", static_cast<double>(r.end_ns - r.start_ns) / 1e6);
    std::string line = "shard " + std::to_string(r.shard) + " attempt " + std::to_string(r.attempt) + " on worker " +
                       std::to_string(r.worker) + ": " + OutcomeWord(r.outcome) + " after " + ms;
    if (!done) line += " (" + r.message + ")" + (r.final ? "" : "; retrying");
    LogDebug(line);
  }
}

std::string ProgressMeter::StatusText() const {
  const double elapsed = static_cast<double>(Now() - start_ns_) / 1e9;
  const double rps = elapsed > 0 ? static_cast<double>(records_) / elapsed : 0;
  const double mbps = elapsed > 0 ? static_cast<double>(raw_bytes_) / 1e6 / elapsed : 0;
  const uint64_t finished = shards_done_ + shards_failed_;
  double fraction = bytes_total_ > 0 ? static_cast<double>(bytes_finished_) / static_cast<double>(bytes_total_)
                    : shards_total_ > 0 ? static_cast<double>(finished) / static_cast<double>(shards_total_)
                                        : 1.0;
  std::string eta = fraction > 0 ? ClockText(elapsed * (1 - fraction) / fraction) : "--:--";
  char mb[32];
  std::snprintf(mb, sizeof mb, "%.1f", mbps);
  return std::to_string(shards_done_) + "/" + std::to_string(shards_total_) + " shards, " + CompactCount(rps) +
         " records/s, " + mb + " MB/s, elapsed " + ClockText(elapsed) + ", ETA " + eta + ", " +
         std::to_string(shards_failed_) + " failed, " + std::to_string(retries_) + " retried";
}

std::string ProgressMeter::LiveText() const {
  const double elapsed = static_cast<double>(Now() - start_ns_) / 1e9;
  const double rps = elapsed > 0 ? static_cast<double>(records_) / elapsed : 0;
  const double mbps = elapsed > 0 ? static_cast<double>(raw_bytes_) / 1e6 / elapsed : 0;
  const uint64_t finished = shards_done_ + shards_failed_;
  const double fraction = bytes_total_ > 0 ? static_cast<double>(bytes_finished_) / static_cast<double>(bytes_total_)
                          : shards_total_ > 0 ? static_cast<double>(finished) / static_cast<double>(shards_total_)
                                              : 1.0;
  char mb[32];
  std::snprintf(mb, sizeof mb, "%.1f", mbps);
  std::string failed = std::to_string(shards_failed_) + " failed";
  if (color_ && shards_failed_ > 0) failed = "\x1b[1m" + failed + "\x1b[0m";
  // Terse, so that it fits 80 columns without the bar.
  std::string text = std::to_string(shards_done_) + "/" + std::to_string(shards_total_) + " shards  " +
                     CompactCount(rps) + " rec/s  " + mb + " MB/s  " + ClockText(elapsed) + "  ETA " +
                     (fraction > 0 ? ClockText(elapsed * (1 - fraction) / fraction) : "--:--") + "  " + failed +
                     "  " + std::to_string(retries_) + " retried";
  const size_t cols = out_->Columns();
  if (cols != 0 && cols < static_cast<size_t>(text.size() + kBarWidth + 4)) return text;
  const int filled = std::clamp(static_cast<int>(std::floor(fraction * kBarWidth)), 0, kBarWidth);
  std::string bar = "[";
  if (color_) bar += "\x1b[34m";  // blue: readable on light and dark backgrounds
  bar += std::string(filled, '=');
  if (filled < kBarWidth) bar += ">";
  if (color_) bar += "\x1b[0m";
  bar += std::string(std::max(0, kBarWidth - filled - 1), ' ') + "] ";
  return bar + text;
}

void ProgressMeter::Tick() {
  if (finished_ || mode_ == ProgressMode::kOff) return;
  const uint64_t now = Now();
  if (mode_ == ProgressMode::kLive) {
    if (drawn_ && now - last_draw_ns_ < kLiveEveryNs) return;
    out_->DrawLive(LiveText());
    drawn_ = true;
    last_draw_ns_ = now;
    return;
  }
  if (now - last_draw_ns_ < plain_every_ns_) return;
  out_->Line("fanfold: " + UtcStamp() + " progress: " + StatusText());
  printed_plain_ = true;
  last_draw_ns_ = now;
}

void ProgressMeter::Finish() {
  if (finished_) return;
  finished_ = true;
  if (mode_ == ProgressMode::kLive && drawn_) out_->ClearLive();
  if (mode_ == ProgressMode::kPlain && printed_plain_)
    out_->Line("fanfold: " + UtcStamp() + " progress: " + StatusText());
}

}  // namespace fanfold
