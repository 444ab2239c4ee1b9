#include "coordinator/merge/group_fold.h"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <optional>
#include <thread>

#include "common/base/byte_io.h"
#include "coordinator/merge/encoded_group_cursor.h"
#include "coordinator/merge/run_cursor.h"

namespace fanfold {
namespace {

// A run or partial walked in memory (RunCursor), or a stored partial
// decoded as it is walked (PartialGroupStream): the same calls.
class FoldCursor {
 public:
  explicit FoldCursor(RunCursor c) : run_(std::move(c)) {}
  explicit FoldCursor(std::unique_ptr<PartialGroupStream> s) : stream_(std::move(s)) {}
  bool Next() { return stream_ ? stream_->Next() : run_->Next(); }
  bool SeekAtLeast(std::string_view k) { return stream_ ? stream_->SeekAtLeast(k) : run_->SeekAtLeast(k); }
  std::string_view key() const { return stream_ ? stream_->key() : run_->key(); }
  std::string_view state(size_t j) const { return stream_ ? stream_->state(j) : run_->state(j); }
  // REQUIRES: a run's cursor (the base), positioned.
  std::string_view group_bytes() const { return run_->group_bytes(); }
  const Status& status() const { return stream_ ? stream_->status() : run_->status(); }
  uint64_t groups_read() const { return stream_ ? stream_->groups_read() : run_->groups_read(); }

 private:
  std::optional<RunCursor> run_;
  std::unique_ptr<PartialGroupStream> stream_;
};

// Partial p of the fold as a cursor.
FoldCursor PartialCursor(const FoldInputs& in, size_t p, size_t m) {
  if (in.streams.empty()) return FoldCursor(RunCursor(in.partials[p], m));
  return FoldCursor(std::make_unique<PartialGroupStream>(in.streams[p], in.reduction, m));
}
uint64_t PartialGroups(const FoldInputs& in, size_t p, size_t m) {
  if (in.streams.empty()) return EncodedGroupCursor(in.partials[p], m).group_count();
  return in.stream_groups[p];
}

// Input i of the fold: 0 is the base run (when there is one), then the
// partials in shard order. The merge order of equal keys is this index.
struct Source {
  FoldCursor cursor;
  size_t partial;  // index in FoldInputs::partials, or FoldOutcome::kNoPartial for the base
};

// A source on the fold's heap: its current key, and its index (the merge
// order of equal keys).
struct HeapEntry {
  std::string_view key;
  size_t src;
};

// a comes before b: smaller key, or the same key from an earlier source.
inline bool Before(const HeapEntry& a, const HeapEntry& b) {
  if (EncodedGroupCursor::KeyLess(a.key, b.key)) return true;
  return a.src < b.src && !EncodedGroupCursor::KeyLess(b.key, a.key);
}

// Keys are short: compared inline, a word at a time.
inline bool SameKey(std::string_view a, std::string_view b) {
  if (a.size() != b.size()) return false;
  size_t i = 0;
  for (; i + 8 <= a.size(); i += 8) {
    uint64_t x, y;
    std::memcpy(&x, a.data() + i, 8);
    std::memcpy(&y, b.data() + i, 8);
    if (x != y) return false;
  }
  for (; i < a.size(); ++i)
    if (a[i] != b[i]) return false;
  return true;
}

void SiftDown(std::vector<HeapEntry>& h, size_t i) {
  const size_t n = h.size();
  const HeapEntry x = h[i];
  for (;;) {
    size_t c = 2 * i + 1;
    if (c >= n) break;
    if (c + 1 < n && Before(h[c + 1], h[c])) ++c;
    if (!Before(h[c], x)) break;
    h[i] = h[c];
    i = c;
  }
  h[i] = x;
}

void SiftUp(std::vector<HeapEntry>& h, size_t i) {
  const HeapEntry x = h[i];
  while (i > 0) {
    const size_t parent = (i - 1) / 2;
    if (!Before(x, h[parent])) break;
    h[i] = h[parent];
    i = parent;
  }
  h[i] = x;
}

FoldOutcome Failed(Status s, size_t partial) {
  FoldOutcome o;
  o.status = std::move(s);
  o.bad_partial = partial;
  return o;
}

FoldOutcome CursorFailed(const Source& src) {
  return Failed(src.partial == FoldOutcome::kNoPartial
                    ? src.cursor.status().WithContext("the merged run")
                    : src.cursor.status().WithContext("partial " + std::to_string(src.partial)),
                src.partial);
}

}  // namespace

GroupFold::GroupFold(const std::vector<MeasureConfig>* configs) : configs_(configs) {
  for (const MeasureConfig& c : *configs) {
    states_.push_back(NewMeasureState(c));
    scratch_.push_back(NewMeasureState(c));
    std::string bytes;
    ByteWriter w(&bytes);
    states_.back()->Encode(w);
    empty_.push_back(std::move(bytes));
  }
}

// The fold's base run as a cursor, or nothing.
bool HasBase(const FoldInputs& in) { return !in.base_pieces.empty() || !in.base.empty(); }
RunCursor BaseCursor(const FoldInputs& in, size_t m) {
  return in.base_pieces.empty() ? RunCursor(in.base, m) : RunCursor(in.base_pieces, m);
}

FoldOutcome GroupFold::FoldRange(const FoldInputs& in, const KeyRange& range, std::string* out, const Drain* drain) {
  const size_t m = configs_->size();
  std::vector<Source> sources;
  sources.reserve(in.partial_count() + 1);
  if (HasBase(in)) sources.push_back({FoldCursor(BaseCursor(in, m)), FoldOutcome::kNoPartial});
  for (size_t p = 0; p < in.partial_count(); ++p) sources.push_back({PartialCursor(in, p, m), p});
  const std::string_view hi = range.hi;
  const auto in_range = [&](const FoldCursor& c) { return !range.bounded || EncodedGroupCursor::KeyLess(c.key(), hi); };
  // The heap holds the sources positioned on a key in range, smallest key
  // on top, equal keys in source order (base, then shard order); each
  // entry caches its source's key.
  std::vector<HeapEntry> heap;
  for (size_t i = 0; i < sources.size(); ++i) {
    FoldCursor& c = sources[i].cursor;
    if (!c.status().ok()) return CursorFailed(sources[i]);
    if (c.SeekAtLeast(range.lo)) {
      if (in_range(c)) heap.push_back({c.key(), i});
    } else if (!c.status().ok()) {
      return CursorFailed(sources[i]);
    }
  }
  for (size_t i = heap.size() / 2; i-- > 0;) SiftDown(heap, i);
  FoldOutcome outcome;
  ByteWriter w(out);
  std::vector<size_t> holders;  // sources positioned on the current key, in source order
  while (!heap.empty()) {
    holders.clear();
    const std::string_view key = heap.front().key;
    // Other sources on this key lie below the top through entries with
    // the same key, so when neither child has it the top is alone (the
    // common case: advanced and sifted down in place, below).
    const bool alone = (heap.size() < 2 || !SameKey(heap[1].key, key)) && (heap.size() < 3 || !SameKey(heap[2].key, key));
    if (alone) {
      holders.push_back(heap.front().src);
    } else {
      while (!heap.empty() && SameKey(heap.front().key, key)) {
        holders.push_back(heap.front().src);
        heap.front() = heap.back();
        heap.pop_back();
        if (!heap.empty()) SiftDown(heap, 0);
      }
    }
    const bool from_base = sources[holders[0]].partial == FoldOutcome::kNoPartial;
    if (from_base && holders.size() == 1 && visit_ == nullptr) {
      // No later shard has this key: its bytes are what the in-memory
      // table would encode, unchanged (a run's framing is ours, written
      // as below), so the group is copied whole.
      w.Bytes(sources[holders[0]].cursor.group_bytes());
    } else {
      if (visit_ == nullptr) w.Str(key);
      for (size_t j = 0; j < m; ++j) {
        MeasureState& st = *states_[j];
        size_t h = 0;
        ByteReader first(from_base ? sources[holders[0]].cursor.state(j) : std::string_view(empty_[j]));
        Status s = st.Decode(first);
        if (s.ok() && !first.at_end()) s = Status::Corrupt("trailing bytes in measure state");
        if (!s.ok())
          return Failed(s.WithContext("the merged run, measure " + std::to_string(j)), FoldOutcome::kNoPartial);
        if (from_base) h = 1;
        for (; h < holders.size(); ++h) {
          const Source& src = sources[holders[h]];
          ByteReader r(src.cursor.state(j));
          s = st.MergeEncoded(r, /*apply=*/true, scratch_[j].get());
          if (s.ok() && !r.at_end()) s = Status::Corrupt("trailing bytes in measure state");
          if (s.code() == Status::Code::kLimitExceeded) return Failed(s, FoldOutcome::kNoPartial);
          if (!s.ok())
            return Failed(s.WithContext("partial " + std::to_string(src.partial) + ", group " +
                                        std::to_string(src.cursor.groups_read() - 1) + ", measure " +
                                        std::to_string(j)),
                          src.partial);
        }
        if (visit_ != nullptr) continue;  // handed over below, not encoded
        encoded_.clear();
        ByteWriter sw(&encoded_);
        st.Encode(sw);
        w.Str(encoded_);
      }
      if (visit_ != nullptr) {
        if (Status s = (*visit_)(key, states_); !s.ok()) {
          visit_failed_ = true;
          return Failed(std::move(s), FoldOutcome::kNoPartial);
        }
      }
    }
    ++outcome.groups;
    if (drain != nullptr && *drain && out->size() >= kDrainBytes) {
      Status s = (*drain)(out);
      if (!s.ok()) return Failed(std::move(s), FoldOutcome::kNoPartial);
    }
    if (alone) {  // the top's source moves on in place
      FoldCursor& c = sources[holders[0]].cursor;
      if (c.Next() && in_range(c)) {
        heap.front().key = c.key();
      } else {
        if (!c.status().ok()) return CursorFailed(sources[holders[0]]);
        heap.front() = heap.back();
        heap.pop_back();
      }
      if (!heap.empty()) SiftDown(heap, 0);
      continue;
    }
    for (size_t i : holders) {
      FoldCursor& c = sources[i].cursor;
      if (c.Next()) {
        if (in_range(c)) {
          heap.push_back({c.key(), i});
          SiftUp(heap, heap.size() - 1);
        }
      } else if (!c.status().ok()) {
        return CursorFailed(sources[i]);
      }
    }
  }
  if (drain != nullptr && *drain && !out->empty()) {
    Status s = (*drain)(out);
    if (!s.ok()) return Failed(std::move(s), FoldOutcome::kNoPartial);
  }
  return outcome;
}

FoldOutcome GroupFold::FoldRangeTo(const FoldInputs& in, const KeyRange& range, const Visit& visit,
                                   bool* visit_failed) {
  visit_ = &visit;
  visit_failed_ = false;
  std::string unused;
  FoldOutcome o = FoldRange(in, range, &unused, nullptr);
  *visit_failed = visit_failed_;
  visit_ = nullptr;
  return o;
}

std::vector<std::string> SplitKeys(const FoldInputs& in, size_t measure_count, size_t parts, double seek_share) {
  const size_t none = SIZE_MAX;
  size_t largest = none;  // index in in.partials, or none for the base
  uint64_t most = HasBase(in) ? BaseCursor(in, measure_count).group_count() : 0;
  uint64_t all = most, streamed = 0;  // input groups, and those read as streams
  for (size_t i = 0; i < in.partial_count(); ++i) {
    const uint64_t n = PartialGroups(in, i, measure_count);
    all += n;
    if (!in.streams.empty()) streamed += n;
    if (n > most) {
      most = n;
      largest = i;
    }
  }
  std::vector<std::string> cuts;
  if (parts < 2 || most < 2) return cuts;
  // Where range `part` starts, as a fraction of the keys (the header's rule).
  const double a = all == 0 ? 1.0 : 1.0 - std::clamp(seek_share, 0.0, 0.9) * static_cast<double>(streamed) /
                                              static_cast<double>(all);
  const auto start = [&](size_t part) {
    if (a >= 1.0) return static_cast<double>(part) / static_cast<double>(parts);
    return (1.0 - std::pow(a, static_cast<double>(part))) / (1.0 - std::pow(a, static_cast<double>(parts)));
  };
  FoldCursor c = largest == none ? FoldCursor(BaseCursor(in, measure_count)) : PartialCursor(in, largest, measure_count);
  for (size_t part = 1; part < parts; ++part) {
    // The cut's group index, ascending (the even split exactly in integers).
    const uint64_t at = a >= 1.0 ? most * part / parts
                                 : std::min<uint64_t>(most - 1, static_cast<uint64_t>(start(part) * static_cast<double>(most)));
    while (c.groups_read() <= at)
      if (!c.Next()) return cuts;  // bad framing: the fold itself finds it and names its input
    if (cuts.empty() || cuts.back() < c.key()) cuts.emplace_back(c.key());
  }
  return cuts;
}

std::vector<KeyRange> CutRanges(const FoldInputs& in, size_t measure_count, size_t threads, double seek_share) {
  std::vector<KeyRange> ranges(1);
  if (threads > 1) {
    for (std::string& cut : SplitKeys(in, measure_count, threads, seek_share)) {
      ranges.back().hi = cut;
      ranges.back().bounded = true;
      ranges.push_back(KeyRange{std::move(cut), "", false});
    }
  }
  return ranges;
}

FoldOutcome FoldRanges(const std::vector<MeasureConfig>* configs, const FoldInputs& in,
                       const std::vector<KeyRange>& ranges, const std::vector<std::string*>& outs,
                       const std::vector<GroupFold::Drain>& drains, std::vector<uint64_t>* groups) {
  std::vector<FoldOutcome> outcomes(ranges.size());
  const auto fold = [&](size_t i) {
    outcomes[i] = GroupFold(configs).FoldRange(in, ranges[i], outs[i], i < drains.size() ? &drains[i] : nullptr);
  };
  {
    std::vector<std::jthread> running;
    for (size_t i = 1; i < ranges.size(); ++i) running.emplace_back(fold, i);
    fold(0);
  }
  FoldOutcome total;
  groups->clear();
  for (FoldOutcome& o : outcomes) {  // the lowest range's failure: the same whatever the thread count
    if (!o.status.ok()) return std::move(o);
    total.groups += o.groups;
    groups->push_back(o.groups);
  }
  return total;
}

FoldOutcome FoldEncoded(const std::vector<MeasureConfig>* configs, const FoldInputs& in, size_t threads,
                        std::string* out) {
  const std::vector<KeyRange> ranges = CutRanges(in, configs->size(), threads);
  std::vector<std::string> parts(ranges.size());
  std::vector<std::string*> outs;
  for (std::string& p : parts) outs.push_back(&p);
  std::vector<uint64_t> groups;
  FoldOutcome total = FoldRanges(configs, in, ranges, outs, {}, &groups);
  if (!total.status.ok()) return total;
  out->clear();
  ByteWriter w(out);
  w.Varint(total.groups);
  for (const std::string& p : parts) w.Bytes(p);
  return total;
}

}  // namespace fanfold
