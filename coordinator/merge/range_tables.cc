#include "coordinator/merge/range_tables.h"

#include <time.h>

#include <algorithm>
#include <thread>


namespace fanfold {
namespace {

double ThreadCpuSeconds() {
  timespec ts{};
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
  return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
}

}  // namespace

RangeTables::RangeTables(const std::vector<MeasureConfig>* configs, size_t ranges, uint64_t min_groups_for_threads)
    : configs_(configs), wanted_(std::max<size_t>(ranges, 1)), min_groups_for_threads_(min_groups_for_threads) {
  tables_.emplace_back(configs_);
  merged_.assign(1, 0);
}

size_t RangeTables::group_count() const {
  size_t n = 0;
  for (const GroupTable& t : tables_) n += t.group_count();
  return n;
}

size_t RangeTables::RangeOf(std::string_view key) const {
  return static_cast<size_t>(std::upper_bound(cuts_.begin(), cuts_.end(), key,
                                              [](std::string_view k, const std::string& c) { return k < c; }) -
                             cuts_.begin());
}

MeasureState* const* RangeTables::FindOrAdd(std::string_view key) { return tables_[RangeOf(key)].FindOrAdd(key); }

Status CutByKeys(std::string_view encoded, size_t m, const std::vector<std::string>& cuts,
                 std::vector<RangeSlice>* slices, size_t* bad_range) {
  using Slice = RangeSlice;
  slices->assign(cuts.size() + 1, Slice{});
  ByteReader r(encoded);
  const auto offset = [&] { return encoded.size() - r.remaining(); };
  // Each group needs at least a key length byte and m state length bytes.
  const uint64_t n = r.Count(1 + m);
  if (!r.ok()) {
    *bad_range = 0;
    return Status::Corrupt("group count larger than the partial state");
  }
  size_t range = 0;
  (*slices)[0].begin = offset();
  // Closes the slices at byte `at`: the current range's ends there, later
  // ones are empty.
  const auto close = [&](size_t at, uint64_t next_group) {
    (*slices)[range].end = at;
    for (size_t i = range + 1; i < slices->size(); ++i) (*slices)[i] = Slice{at, at, next_group, 0};
  };
  std::string_view previous;
  for (uint64_t g = 0; g < n; ++g) {
    const size_t at = offset();
    const std::string_view key = r.Str();
    Status bad;
    if (!r.ok()) {
      bad = Status::Corrupt("group " + std::to_string(g) + ": truncated key");
    } else if (g > 0 && !(previous < key)) {
      bad = Status::Corrupt("group " + std::to_string(g) + ": keys not in strictly ascending order");
    } else {
      while (range < cuts.size() && !(key < cuts[range])) {  // the key starts a later range
        (*slices)[range].end = at;
        ++range;
        (*slices)[range] = Slice{at, at, g, 0};
      }
      for (size_t j = 0; j < m && r.ok(); ++j) (void)r.Str();
      if (!r.ok()) bad = Status::Corrupt("group " + std::to_string(g) + ": truncated measure state");
    }
    if (!bad.ok()) {
      close(at, g);
      *bad_range = range;
      return bad;
    }
    previous = key;
    ++(*slices)[range].count;
  }
  close(offset(), n);
  if (!r.at_end()) {
    *bad_range = slices->size() - 1;
    return Status::Corrupt("trailing bytes after the last group");
  }
  return Status::Ok();
}

void RangeTables::TakeCuts(std::string_view encoded) {
  cut_ = true;
  const size_t m = configs_->size();
  ByteReader r(encoded);
  const uint64_t n = r.Count(1 + m);
  size_t part = 1;
  for (uint64_t g = 0; g < n && part < wanted_; ++g) {
    const std::string_view key = r.Str();
    for (size_t j = 0; j < m; ++j) (void)r.Str();
    if (!r.ok()) return;  // REQUIRES good framing; never taken otherwise
    if (g == n * part / wanted_) {
      if (g > 0 && (cuts_.empty() || cuts_.back() < key)) cuts_.emplace_back(key);
      ++part;
    }
  }
  if (cuts_.empty()) return;
  // Range 0 held every group so far: move each to its range.
  std::string old;
  ByteWriter w(&old);
  tables_[0].Encode(w);
  const uint64_t merged0 = merged_[0];
  tables_.clear();
  for (size_t i = 0; i <= cuts_.size(); ++i) tables_.emplace_back(configs_);
  merged_.assign(tables_.size(), 0);
  merged_[0] = merged0;
  std::vector<Slice> slices;
  size_t bad_range = 0;
  (void)Cut(old, &slices, &bad_range);  // our own encoding: good
  for (size_t i = 0; i < tables_.size(); ++i) {
    std::string one;
    ByteWriter ow(&one);
    ow.Varint(slices[i].count);
    ow.Bytes(std::string_view(old).substr(slices[i].begin, slices[i].end - slices[i].begin));
    ByteReader orr(one);
    (void)tables_[i].Decode(orr);  // decodes what Encode wrote: cannot fail
  }
}

Status RangeTables::Walk(std::string_view encoded, bool merge) {
  if (tables_.size() == 1) {
    // One range (and no cuts to take from this partial): the one table's
    // own walk, with no framing scan before it.
    ByteReader r(encoded);
    const uint64_t n = r.Varint();
    if (wanted_ == 1 || cut_ || !r.ok() || n < kMinGroupsToCut) {
      Status s = merge ? tables_[0].MergeEncoded(encoded) : tables_[0].CheckEncoded(encoded);
      if (s.ok() && merge) merged_[0] += n;
      return s;
    }
  }
  std::vector<Slice> slices;
  size_t bad_range = SIZE_MAX;
  Status framing = Cut(encoded, &slices, &bad_range);
  if (framing.ok() && !cut_ && wanted_ > 1) {
    uint64_t n = 0;
    for (const Slice& s : slices) n += s.count;
    if (n >= kMinGroupsToCut) {
      TakeCuts(encoded);
      framing = Cut(encoded, &slices, &bad_range);
    }
  }
  // A one-table walk stops at the bad framing: the ranges after its group's
  // hold nothing before it, and are not walked.
  const size_t walked = std::min(bad_range, tables_.size() - 1) + 1;
  std::vector<Status> done(walked);
  std::vector<uint64_t> groups(walked);
  for (size_t i = 0; i < walked; ++i) groups[i] = slices[i].count;
  OnRanges(groups, [&](size_t i) {
    const Slice& s = slices[i];
    const std::string_view bytes = encoded.substr(s.begin, s.end - s.begin);
    done[i] = merge ? tables_[i].MergeEncodedGroups(bytes, s.count, s.first)
                    : tables_[i].CheckEncodedGroups(bytes, s.count, s.first);
  });
  for (size_t i = 0; i < walked; ++i) {
    if (!done[i].ok()) return done[i];  // the lowest range's: the first group's error
    if (merge) merged_[i] += slices[i].count;
  }
  return framing;
}

template <class RangeWalk>
void RangeTables::OnRanges(const std::vector<uint64_t>& groups, const RangeWalk& walk) {
  const size_t n = groups.size();
  std::vector<double> cpu(n, 0.0);
  const auto timed = [&](size_t i) {
    if (groups[i] == 0) return;  // nothing to walk
    const double c0 = ThreadCpuSeconds();
    walk(i);
    cpu[i] = ThreadCpuSeconds() - c0;
  };
  uint64_t all = 0;
  size_t busy = 0;
  for (uint64_t g : groups) {
    all += g;
    busy += g > 0 ? 1 : 0;
  }
  const bool threaded = all >= min_groups_for_threads_ && busy > 1;
  if (!threaded) {  // starting threads would cost more than they save
    for (size_t i = 0; i < n; ++i) timed(i);
  } else {
    std::vector<std::jthread> running;
    for (size_t i = 1; i < n; ++i)
      if (groups[i] > 0) running.emplace_back([&timed, i] { timed(i); });
    timed(0);
  }
  double sum = 0, slowest = 0;
  for (double c : cpu) {
    sum += c;
    slowest = std::max(slowest, c);
  }
  walk_cpu_s_ += sum;
  critical_walk_cpu_s_ += threaded ? slowest : sum;
}

Status RangeTables::PlanBatch(const std::vector<std::string_view>& encoded, std::vector<uint64_t>* new_by_input) {
  new_by_input->assign(encoded.size(), 0);
  const size_t ranges = tables_.size();
  std::vector<std::vector<GroupTable::EncodedSlice>> per_range(ranges);
  std::vector<std::vector<size_t>> input_of(ranges);  // per range: each slice's encoding
  batch_groups_.assign(ranges, 0);
  std::vector<Slice> slices;
  for (size_t e = 0; e < encoded.size(); ++e) {
    size_t bad_range = 0;
    FF_RETURN_IF_ERROR(Cut(encoded[e], &slices, &bad_range));
    for (size_t i = 0; i < ranges; ++i) {
      const Slice& s = slices[i];
      if (s.count == 0) continue;
      per_range[i].push_back(GroupTable::EncodedSlice{encoded[e].substr(s.begin, s.end - s.begin), s.count, s.first});
      input_of[i].push_back(e);
      batch_groups_[i] += s.count;
    }
  }
  std::vector<Status> done(ranges);
  std::vector<std::vector<uint64_t>> added(ranges);
  OnRanges(batch_groups_, [&](size_t i) { done[i] = tables_[i].PlanBatch(per_range[i], &added[i]); });
  for (size_t i = 0; i < ranges; ++i) {
    if (!done[i].ok()) {
      DropBatch();
      return done[i];
    }
    for (size_t j = 0; j < added[i].size(); ++j) (*new_by_input)[input_of[i][j]] += added[i][j];
  }
  return Status::Ok();
}

Status RangeTables::ApplyBatch() {
  const size_t ranges = tables_.size();
  std::vector<Status> done(ranges);
  OnRanges(batch_groups_, [&](size_t i) { done[i] = tables_[i].ApplyBatch(); });
  for (size_t i = 0; i < ranges; ++i) {
    FF_RETURN_IF_ERROR(done[i]);
    merged_[i] += batch_groups_[i];
  }
  return Status::Ok();
}

void RangeTables::Encode(ByteWriter& w) const {
  w.Varint(group_count());
  std::string one;
  for (const GroupTable& t : tables_) {
    one.clear();
    ByteWriter ow(&one);
    t.Encode(ow);
    ByteReader r(one);
    (void)r.Varint();  // its own count
    w.Bytes(std::string_view(one).substr(one.size() - r.remaining()));
  }
}

void RangeTables::Clear() {
  for (GroupTable& t : tables_) t = GroupTable(configs_);
  merged_.assign(tables_.size(), 0);
}

}  // namespace fanfold
