#include "coordinator/output/ordered_rows.h"

#include <algorithm>

#include "coordinator/output/row_codec.h"

namespace fanfold {
namespace {
constexpr uint64_t kHeldOverhead = sizeof(std::string) * 2 + 32;  // per heap row, beside its bytes
}

OrderedRows::OrderedRows(std::vector<SortColumn> order, std::optional<uint64_t> limit, uint64_t budget,
                         Platform& platform, std::string spill_dir, size_t fan_in)
    : order_(std::move(order)),
      limit_(limit),
      budget_(budget),
      platform_(platform),
      spill_dir_(std::move(spill_dir)),
      fan_in_(fan_in),
      heap_mode_(limit.has_value()) {
  if (!heap_mode_) sorter_ = std::make_unique<RowSorter>(platform_, spill_dir_, budget_, fan_in_);
}

Status OrderedRows::Add(const std::vector<Cell>& row) {
  key_.clear();
  AppendSortKey(row, order_, arrival_++, &key_);
  if (!heap_mode_) {
    row_.clear();
    EncodeRow(row, &row_);
    return sorter_->Add(key_, row_);
  }
  if (*limit_ == 0) return Status::Ok();
  // Full: a row after the last one kept can never be among the first.
  if (heap_.size() == *limit_) {
    if (key_ > heap_.front().key) return Status::Ok();
    std::pop_heap(heap_.begin(), heap_.end(), KeyLess);
    heap_bytes_ -= heap_.back().key.size() + heap_.back().row.size() + kHeldOverhead;
    heap_.pop_back();
  }
  Held h{key_, {}};
  EncodeRow(row, &h.row);
  heap_bytes_ += h.key.size() + h.row.size() + kHeldOverhead;
  heap_.push_back(std::move(h));
  std::push_heap(heap_.begin(), heap_.end(), KeyLess);
  return heap_bytes_ > budget_ ? ToSorter() : Status::Ok();
}

Status OrderedRows::ToSorter() {
  heap_mode_ = false;
  sorter_ = std::make_unique<RowSorter>(platform_, spill_dir_, budget_, fan_in_);
  std::vector<Held> held;
  held.swap(heap_);
  heap_bytes_ = 0;
  for (Held& h : held) {
    FF_RETURN_IF_ERROR(sorter_->Add(h.key, h.row));
    std::string().swap(h.key);
    std::string().swap(h.row);
  }
  return Status::Ok();
}

Status OrderedRows::Finish() {
  if (!heap_mode_) return sorter_->Finish();
  std::sort_heap(heap_.begin(), heap_.end(), KeyLess);
  return Status::Ok();
}

Status OrderedRows::Replay(const Visitor& visit) const {
  std::vector<Cell> cells;
  if (heap_mode_) {
    for (const Held& h : heap_) {
      FF_RETURN_IF_ERROR(DecodeRow(h.row, &cells));
      FF_RETURN_IF_ERROR(visit(cells));
    }
    return Status::Ok();
  }
  uint64_t left = limit_.value_or(UINT64_MAX);
  if (left == 0) return Status::Ok();
  return sorter_->Replay([&](std::string_view row, bool* stop) {
    FF_RETURN_IF_ERROR(DecodeRow(row, &cells));
    FF_RETURN_IF_ERROR(visit(cells));
    *stop = --left == 0;
    return Status::Ok();
  });
}

}  // namespace fanfold
