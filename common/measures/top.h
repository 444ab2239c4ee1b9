// TopState: the state of `top` — the config.k most frequent values with
// their counts. Counts are exact while the group has at most config.limit
// distinct values. Past that the state becomes a Misra-Gries summary (Misra
// & Gries 1982) of config.limit counters, merged as Agarwal et al. (2012,
// "Mergeable summaries", PODS) describe. Then every reported count is a
// lower bound, and for every value v
//     true(v) - bound <= reported(v) <= true(v),   bound = (n - S)/(limit + 1),
// where n is the number of values added and S the sum of the counters kept
// (a value not kept is reported as 0); ErrorBound() gives it. Values are
// compared as ValueKeys (1 != "1"). Single-threaded.
#pragma once

#include <string>
#include <string_view>
#include <functional>
#include <unordered_map>

#include "common/measures/measure.h"
#include "common/base/value_key.h"

namespace fanfold {

class TopState final : public MeasureState {
 public:
  explicit TopState(const MeasureConfig& config);

  bool Add(const Value* args) override;
  Status Merge(const MeasureState& other) override;
  // Encoding: varint skipped, varint n, u8 exact (0|1), varint count, then
  // count x (string key, varint counter) in ascending key order.
  void Encode(ByteWriter& w) const override;
  Status Decode(ByteReader& r) override;
  // One List of up to k Records {"value", "count"}, by count descending,
  // then value ascending (ValueKey order: bools, numbers, strings).
  void Finalize(std::vector<Cell>* out) const override;
  uint64_t skipped() const override { return skipped_; }

  // True iff no counter was ever decremented: every count is exact.
  bool exact() const { return exact_; }
  bool degraded() const override { return !exact_; }
  // The most any count can be short by (0 when exact()).
  uint64_t ErrorBound() const;
  // The counter kept for v (0 if none). For tests.
  uint64_t CountOf(const Value& v) const;

 private:
  using CounterMap =
      std::unordered_map<std::string, uint64_t, TransparentStringHash, std::equal_to<>>;
  // Subtracts `amount` from every counter and drops those that reach 0.
  void DecrementAll(uint64_t amount);

  uint32_t k_;
  uint64_t limit_;
  uint64_t n_ = 0;
  uint64_t skipped_ = 0;
  bool exact_ = true;
  CounterMap counters_;
  std::string scratch_;  // reused key buffer
};

}  // namespace fanfold
