#include "common/measures/sketches/ddsketch_store.h"

#include <algorithm>

namespace fanfold {
namespace {

uint64_t ZigZag(int64_t v) { return (static_cast<uint64_t>(v) << 1) ^ static_cast<uint64_t>(v >> 63); }
int64_t UnZigZag(uint64_t u) { return static_cast<int64_t>(u >> 1) ^ -static_cast<int64_t>(u & 1); }

}  // namespace

void DDSketchStore::Cover(int32_t lo, int32_t hi) {
  const int64_t have_lo = offset_;
  const int64_t have_hi = static_cast<int64_t>(offset_) + static_cast<int64_t>(counts_.size()) - 1;
  if (!counts_.empty() && lo >= have_lo && hi <= have_hi) return;
  // Grow with slack on the side that needed it, so a drifting range costs
  // amortised O(1) per Add; never past the span bound plus that slack.
  const int64_t want = static_cast<int64_t>(hi) - lo + 1;
  const int64_t slack = std::clamp<int64_t>(want / 2, 32, kMaxSpan / 2);
  int64_t new_lo = lo, new_hi = hi;
  if (!counts_.empty()) {
    new_lo = std::min<int64_t>(new_lo, have_lo);
    new_hi = std::max<int64_t>(new_hi, have_hi);
    if (lo < have_lo) new_lo -= slack;
    if (hi > have_hi) new_hi += slack;
  } else {
    new_lo -= slack / 2;
    new_hi += slack / 2;
  }
  new_lo = std::max<int64_t>(new_lo, kMinIndex);
  new_hi = std::min<int64_t>(new_hi, kMaxIndex);
  std::vector<uint64_t> grown(static_cast<size_t>(new_hi - new_lo + 1), 0);
  if (total_ != 0) {
    std::copy(counts_.begin() + (lo_ - offset_), counts_.begin() + (hi_ - offset_) + 1,
              grown.begin() + (lo_ - new_lo));
  }
  counts_.swap(grown);
  offset_ = static_cast<int32_t>(new_lo);
}

void DDSketchStore::AddSlow(int32_t index, uint64_t count) {
  if (total_ == 0) {
    Cover(index, index);
    lo_ = hi_ = index;
  } else if (index > hi_) {
    const int64_t floor_index = static_cast<int64_t>(index) - kMaxSpan + 1;
    if (floor_index > lo_) {
      // Fold every bucket below floor_index into it. Rebuilt from scratch so
      // that the freed low part of the run is released too.
      uint64_t folded = 0;
      std::vector<uint64_t> kept;
      const int32_t fi = static_cast<int32_t>(floor_index);
      for (int32_t i = lo_; i <= hi_ && i < fi; ++i) folded += counts_[i - offset_];
      const int32_t keep_hi = std::max(hi_, fi);
      kept.assign(static_cast<size_t>(keep_hi - fi + 1), 0);
      for (int32_t i = fi; i <= hi_; ++i) kept[i - fi] = counts_[i - offset_];
      kept[0] += folded;
      counts_.swap(kept);
      offset_ = fi;
      lo_ = fi;
      hi_ = keep_hi;
    }
    Cover(lo_, index);
    hi_ = index;
  } else if (index < lo_) {
    // Past the span bound a new low value lands in the lowest kept bucket.
    const int64_t floor_index = static_cast<int64_t>(hi_) - kMaxSpan + 1;
    if (index < floor_index) index = static_cast<int32_t>(floor_index);
    Cover(index, hi_);
    lo_ = std::min(lo_, index);
  } else {
    Cover(lo_, hi_);
  }
  counts_[static_cast<size_t>(index - offset_)] += count;
  total_ += count;
}

void DDSketchStore::MergeFrom(const DDSketchStore& other) {
  if (other.total_ == 0) return;
  // Folding is decided by the highest index alone, so adding the other
  // store's highest bucket first does every fold at once, up front.
  for (int32_t i = other.hi_; i >= other.lo_; --i) {
    const uint64_t c = other.counts_[i - other.offset_];
    if (c != 0) Add(i, c);
  }
}

uint64_t DDSketchStore::CountAt(int32_t index) const {
  if (total_ == 0 || index < lo_ || index > hi_) return 0;
  return counts_[index - offset_];
}

int32_t DDSketchStore::IndexOfRank(uint64_t r) const {
  uint64_t seen = 0;
  for (int32_t i = lo_; i < hi_; ++i) {
    seen += counts_[i - offset_];
    if (seen > r) return i;
  }
  return hi_;
}

int32_t DDSketchStore::IndexOfRankDescending(uint64_t r) const {
  uint64_t seen = 0;
  for (int32_t i = hi_; i > lo_; --i) {
    seen += counts_[i - offset_];
    if (seen > r) return i;
  }
  return lo_;
}

void DDSketchStore::Encode(ByteWriter& w) const {
  if (total_ == 0) {
    w.Varint(0);
    return;
  }
  w.Varint(static_cast<uint64_t>(hi_ - lo_) + 1);
  w.Varint(ZigZag(lo_));
  uint64_t empty_run = 0;
  for (int32_t i = lo_; i <= hi_; ++i) {
    const uint64_t c = counts_[i - offset_];
    if (c == 0) {
      ++empty_run;
      continue;
    }
    if (empty_run > 0) {
      w.Varint(0);
      w.Varint(empty_run);
      empty_run = 0;
    }
    w.Varint(c);
  }
}

bool DDSketchStore::ReadRun(ByteReader& r, EncodedRun* out) {
  const uint64_t span = r.Varint();
  if (!r.ok() || span > static_cast<uint64_t>(kMaxSpan)) return false;
  out->lo = 0;
  out->span = 0;
  out->total = 0;
  out->counts = ByteReader(std::string_view());
  out->listed = 0;
  out->listed_all = span == 0;
  if (span == 0) return true;
  const int64_t lo = UnZigZag(r.Varint());
  // lo comes from the input: compare it with a bound rather than add to it.
  if (!r.ok() || lo < kMinIndex || lo > kMaxIndex - static_cast<int64_t>(span) + 1) return false;
  out->counts = r;
  uint64_t total = 0, covered = 0;
  uint32_t nonempty = 0;
  bool after_empty_run = false;
  while (covered < span) {
    const uint64_t c = r.Varint();
    if (!r.ok() || c > kMaxTotal - total) return false;
    if (c > 0) {
      if (nonempty < EncodedRun::kListed) {
        out->offset[nonempty] = static_cast<uint16_t>(covered);
        out->count[nonempty] = c;
      }
      ++nonempty;
      total += c;
      ++covered;
      after_empty_run = false;
      continue;
    }
    // A run of empty buckets: never first, never next to another run, and
    // it must leave room for a non-empty last bucket.
    const uint64_t run = r.Varint();
    if (!r.ok() || covered == 0 || after_empty_run || run == 0 || run >= span - covered) return false;
    covered += run;
    after_empty_run = true;
  }
  out->lo = static_cast<int32_t>(lo);
  out->span = span;
  out->total = total;
  out->listed = std::min(nonempty, EncodedRun::kListed);
  out->listed_all = nonempty <= EncodedRun::kListed;
  return true;
}

bool DDSketchStore::Decode(ByteReader& r) {
  EncodedRun run;
  if (!ReadRun(r, &run)) return false;
  AssignRun(run);
  return true;
}

void DDSketchStore::PrefetchRun(ByteReader& r) const {
  const uint64_t span = r.Varint();
  if (!r.ok() || span == 0 || span > static_cast<uint64_t>(kMaxSpan)) return;
  const int64_t lo = UnZigZag(r.Varint());
  const int64_t have_lo = offset_;
  const int64_t have_n = static_cast<int64_t>(counts_.size());
  const char* base = reinterpret_cast<const char*>(counts_.data());
  int64_t last_line = -1;
  uint64_t i = 0;
  for (int seen = 0; seen < 32 && i < span && r.ok(); ++seen) {
    const uint64_t c = r.Varint();
    if (c == 0) {
      i += r.Varint();
      continue;
    }
    const int64_t at = lo + static_cast<int64_t>(i) - have_lo;  // lo and i are at most 2^31 and 2^16
    if (at >= 0 && at < have_n && (at * 8) / 64 != last_line) {
      last_line = (at * 8) / 64;
      __builtin_prefetch(base + at * 8);
    }
    ++i;
  }
}

void DDSketchStore::AssignRun(const EncodedRun& run) {
  *this = DDSketchStore();
  if (run.span == 0) return;
  counts_.assign(run.span, 0);
  ForEachBucket(run, [this](uint64_t i, uint64_t c) { counts_[i] = c; });
  offset_ = lo_ = run.lo;
  hi_ = static_cast<int32_t>(run.lo + static_cast<int64_t>(run.span) - 1);
  total_ = run.total;
}

void DDSketchStore::MergeRun(const EncodedRun& run) {
  if (run.span == 0) return;
  const int32_t run_hi = static_cast<int32_t>(run.lo + static_cast<int64_t>(run.span) - 1);
  const int32_t new_lo = total_ == 0 ? run.lo : std::min(lo_, run.lo);
  const int32_t new_hi = total_ == 0 ? run_hi : std::max(hi_, run_hi);
  if (static_cast<int64_t>(new_hi) - new_lo < kMaxSpan) {
    // Nothing folds, so the order of additions cannot matter: add the run
    // in one pass over the bytes.
    Cover(new_lo, new_hi);
    uint64_t* dst = counts_.data() + (run.lo - offset_);
    ForEachBucket(run, [dst](uint64_t i, uint64_t c) { dst[i] += c; });
    lo_ = new_lo;
    hi_ = new_hi;
    total_ += run.total;
    return;
  }
  // Folding ahead: the general path, highest bucket first (see MergeFrom).
  std::vector<std::pair<int32_t, uint64_t>> buckets;
  ForEachBucket(run, [&](uint64_t i, uint64_t c) {
    buckets.emplace_back(static_cast<int32_t>(run.lo + static_cast<int64_t>(i)), c);
  });
  for (auto it = buckets.rbegin(); it != buckets.rend(); ++it) Add(it->first, it->second);
}

}  // namespace fanfold
