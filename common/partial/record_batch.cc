#include "common/partial/record_batch.h"

#include <algorithm>

namespace fanfold {

// At least one slot per row, so that record() never offsets a null pointer.
RecordBatch::RecordBatch(size_t width) : width_(width), rows_(kCapacity * (width > 0 ? width : 1)) {}

void RecordBatch::Add(const Value* slots) {
  Value* row = record(size_++);
  if (!copy_strings_) {
    std::copy(slots, slots + width_, row);
    return;
  }
  for (size_t i = 0; i < width_; ++i) {
    row[i] = slots[i];
    if (row[i].kind == ValueKind::kString) {
      row[i].str = strings_.Copy(row[i].str);
      string_bytes_ += row[i].str.size();
    }
  }
}

void RecordBatch::Commit() {
  Value* row = record(size_++);
  if (!copy_strings_) return;
  for (size_t i = 0; i < width_; ++i) {
    if (row[i].kind == ValueKind::kString) {
      row[i].str = strings_.Copy(row[i].str);
      string_bytes_ += row[i].str.size();
    }
  }
}

void RecordBatch::Clear() {
  size_ = 0;
  string_bytes_ = 0;
  strings_.Reset();
}

}  // namespace fanfold
