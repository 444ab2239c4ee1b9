// ExactDistinctState: the state of `distinct` — the set of distinct values
// themselves (as ValueKeys, not hashes, so the count is exact), at most
// config.limit of them. Strings, numbers and bools count; the number 1 and
// the string "1" are different values; -0.0 == 0.0. Merge is set union.
// Single-threaded.
#pragma once

#include <string>
#include <functional>
#include <string_view>
#include <unordered_set>

#include "common/measures/measure.h"
#include "common/base/value_key.h"

namespace fanfold {

class ExactDistinctState final : public MeasureState {
 public:
  explicit ExactDistinctState(const MeasureConfig& config) : limit_(config.limit) {}

  // Returns false iff this value would be distinct value number limit + 1.
  bool Add(const Value* args) override;
  // LimitExceeded iff the union holds more than limit values; this state is
  // then unusable.
  Status Merge(const MeasureState& other) override;
  // Encoding: varint skipped, varint count, count x string key (ValueKey) in
  // ascending byte order, so equal sets encode to equal bytes.
  void Encode(ByteWriter& w) const override;
  Status Decode(ByteReader& r) override;
  // Int(number of distinct values); 0 when empty.
  void Finalize(std::vector<Cell>* out) const override;
  uint64_t skipped() const override { return skipped_; }

  size_t size() const { return keys_.size(); }

 private:
  Status LimitError() const;

  uint64_t limit_;
  uint64_t skipped_ = 0;
  std::unordered_set<std::string, TransparentStringHash, std::equal_to<>> keys_;
  std::string scratch_;  // reused key buffer: probing allocates nothing
};

}  // namespace fanfold
