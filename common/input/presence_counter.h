// PresenceCounter: a RecordSink in front of another that counts, per raw
// field of a FieldTable, the records in which the reader found a value
// (anything but Missing: null counts, an empty CSV cell does not). The
// counts travel in the shard's partial state to the end-of-run warning about
// fields that no record had. The table and the next sink must outlive it;
// one per reader; not thread-safe.
#pragma once

#include <cstdint>
#include <vector>

#include "common/base/value.h"
#include "common/input/field_table.h"
#include "common/input/record_reader.h"

namespace fanfold {

class PresenceCounter final : public RecordSink {
 public:
  PresenceCounter(const FieldTable& fields, RecordSink* next) : next_(next) {
    for (size_t s = 0; s < fields.size(); ++s)
      if (!fields.slot(s).derived) raw_slots_.push_back(static_cast<int>(s));
    counts_.assign(raw_slots_.size(), 0);
  }

  bool OnRecord(Value* slots) override {
    for (size_t i = 0; i < raw_slots_.size(); ++i) counts_[i] += slots[raw_slots_[i]].is_missing() ? 0 : 1;
    return next_->OnRecord(slots);
  }
  Value* RecordBuffer() override { return next_->RecordBuffer(); }
  void LendStrings() override { next_->LendStrings(); }
  bool EndLoan() override { return next_->EndLoan(); }

  // Per raw field, in FieldTable order (derived fields skipped): the records
  // passed on in which it had a value.
  const std::vector<uint64_t>& counts() const { return counts_; }

 private:
  RecordSink* next_;
  std::vector<int> raw_slots_;    // the raw fields' slots, in table order
  std::vector<uint64_t> counts_;  // parallel to raw_slots_
};

}  // namespace fanfold
