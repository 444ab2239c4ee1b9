// PresenceCounter: counts, per raw field of a FieldTable, the records in
// which the reader found a value (anything but Missing: null counts, an
// empty CSV cell does not). It counts a batch of records at a time: the
// shard's BatchAggregator hands it each batch as the batch drains
// (BatchAggregator::CountPresence), so the counts are those of the records
// aggregated, with no call per record. The counts travel in the shard's
// partial state to the end-of-run warning about fields that no record had.
// One per shard read; not thread-safe.
#pragma once

#include <cstddef>
#include <cstdint>
#include <vector>

#include "common/base/value.h"
#include "common/input/field_table.h"

namespace fanfold {

class PresenceCounter {
 public:
  explicit PresenceCounter(const FieldTable& fields) : width_(fields.size()) {
    for (size_t s = 0; s < fields.size(); ++s)
      if (!fields.slot(s).derived) raw_slots_.push_back(s);
    counts_.assign(raw_slots_.size(), 0);
  }

  // Counts the n records rows[0, n), each the table's size() slots, end to
  // end (a RecordBatch's rows). A field at a time: one pass down a column,
  // four rows a step (two instructions a value, not five, on the benchmark
  // data).
  void CountRows(const Value* rows, size_t n) {
    const size_t w = width_;
    for (size_t i = 0; i < raw_slots_.size(); ++i) {
      const Value* v = rows + raw_slots_[i];
      uint64_t c0 = 0, c1 = 0, c2 = 0, c3 = 0;
      size_t r = 0;
      for (; r + 4 <= n; r += 4, v += 4 * w) {
        c0 += v[0].is_missing() ? 0 : 1;
        c1 += v[w].is_missing() ? 0 : 1;
        c2 += v[2 * w].is_missing() ? 0 : 1;
        c3 += v[3 * w].is_missing() ? 0 : 1;
      }
      for (; r < n; ++r, v += w) c0 += v->is_missing() ? 0 : 1;
      counts_[i] += c0 + c1 + c2 + c3;
    }
  }

  // Per raw field, in FieldTable order (derived fields skipped): the records
  // counted in which it had a value.
  const std::vector<uint64_t>& counts() const { return counts_; }

 private:
  size_t width_;                  // slots per record
  std::vector<size_t> raw_slots_;  // the raw fields' slots, in table order
  std::vector<uint64_t> counts_;  // parallel to raw_slots_
};

}  // namespace fanfold
