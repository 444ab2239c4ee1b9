// OrderInserts: the groups a GroupTable walk added, sorted into the table's
// key order (its order_ vector of group ids) when the walk ends, whatever
// way it ends: each new id goes before the group that was at `before` in the
// old order. REQUIRES: Add is called in ascending key order (so `before`
// never decreases). Used by MergeWalk and the batched fold; single-threaded.
#pragma once

#include <cstddef>
#include <cstdint>
#include <utility>
#include <vector>

namespace fanfold {

class OrderInserts {
 public:
  // order and ordered (the count of ordered ids) must outlive this.
  OrderInserts(std::vector<uint32_t>* order, size_t* ordered) : order_(order), ordered_(ordered) {}
  OrderInserts(const OrderInserts&) = delete;
  OrderInserts& operator=(const OrderInserts&) = delete;
  ~OrderInserts() {
    if (added_.empty()) return;
    std::vector<uint32_t> merged;
    merged.reserve(order_->size() + added_.size());
    size_t from = 0;
    for (const auto& [before, id] : added_) {
      merged.insert(merged.end(), order_->begin() + from, order_->begin() + before);
      merged.push_back(id);
      from = before;
    }
    merged.insert(merged.end(), order_->begin() + from, order_->end());
    order_->swap(merged);
    *ordered_ = order_->size();
  }
  void Add(size_t before, uint32_t id) { added_.emplace_back(before, id); }

 private:
  std::vector<uint32_t>* order_;
  size_t* ordered_;
  std::vector<std::pair<size_t, uint32_t>> added_;
};

}  // namespace fanfold
