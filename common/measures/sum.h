// SumState: the state of `sum`. Integer values (Value::AsNumeric: JSON
// integers, integer text) add up exactly in a WideSum; other numbers in a
// compensated sum (Neumaier 1974, ZAMM 54): a running sum plus a running
// correction that captures the low-order bits each addition loses, so the
// result is as if summed with about twice the precision. Merge adds both
// parts the same way. The result is the exact integer while every value was
// one, else the compensated sum of both parts. Single-threaded.
#pragma once

#include <bit>
#include <cmath>

#include "common/base/wide_sum.h"
#include "common/measures/measure.h"
#include "common/measures/same_state_merge.h"

namespace fanfold {

class SumState final : public SameStateMerge<SumState> {
 public:
  static constexpr const char* kLabel = "sum";

  bool Add(const Value* args) override {
    Value x;
    if (!UsableNumeric(args[0], &x, &skipped_)) return true;
    ++n_;
    if (x.is_integer()) {
      AddInteger(x.Wide());
    } else {
      float_result_ = true;
      AddCompensated(x.number);
    }
    return true;
  }
  // Encoding: varint skipped, varint n, then iff n > 0: u8 flags (bit 0:
  // the result is a Float; bit 1: a non-zero integer part follows), iff bit 1
  // the integer part (WideSum, 16 bytes), iff bit 0 f64 sum, f64 correction.
  void Encode(ByteWriter& w) const override;
  // Writes Encode's bytes at out, which has room for kMaxEncodedBytes;
  // returns their end. Inline: a worker's column encodes one per group.
  static constexpr size_t kMaxEncodedBytes = 2 * kMaxVarintBytes + 1 + 16 + 16;
  char* EncodeTo(char* out) const {
    out = PutVarint(out, skipped_);
    out = PutVarint(out, n_);
    if (n_ == 0) return out;
    const WideInt total = wide_.total();
    const bool has_integer_part = total != 0;
    *out++ = static_cast<char>((float_result_ ? kFloatResult : 0) | (has_integer_part ? kHasIntegerPart : 0));
    if (has_integer_part) {  // WideSum::Encode's 16 bytes
      const auto bits = static_cast<unsigned __int128>(total);
      out = PutU64(out, static_cast<uint64_t>(bits));
      out = PutU64(out, static_cast<uint64_t>(bits >> 64));
    }
    if (float_result_) {
      out = PutU64(out, std::bit_cast<uint64_t>(sum_));
      out = PutU64(out, std::bit_cast<uint64_t>(correction_));
    }
    return out;
  }
  Status Decode(ByteReader& r) override;
  // Int(exact sum) while every value used was an integer; else
  // Float(Result()); Null when no usable value was added.
  void Finalize(std::vector<Cell>* out) const override;
  uint64_t skipped() const override { return skipped_; }

  // True iff Finalize gives a Float: a non-integer was added, or the
  // integer part left the WideInt range (more than 2^63 values).
  bool float_result() const { return float_result_; }
  // The integer part and the compensated result of both parts, 0 when
  // empty. Overflow gives +-inf, and inf + -inf gives NaN, as plain
  // summation would.
  WideInt integer_part() const { return wide_.total(); }
  double Result() const;

 private:
  friend class SameStateMerge<SumState>;
  SumState EmptyLike() const { return SumState(); }
  bool SameConfig(const SumState&) const { return true; }
  void MergeSame(const SumState& o);  // Merge's arithmetic
  // Adds x to the integer part; on WideInt overflow (defined, not expected)
  // the integer part moves into the compensated sum and the result becomes
  // a Float.
  void AddInteger(WideInt x);
  void AddCompensated(double x) { AddCompensated(x, &sum_, &correction_); }
  static void AddCompensated(double x, double* sum, double* correction) {
    const double t = *sum + x;
    // Neumaier's branch: whichever operand is larger keeps its bits in t;
    // the smaller one's lost bits are recovered exactly.
    if (std::fabs(*sum) >= std::fabs(x))
      *correction += (*sum - t) + x;
    else
      *correction += (x - t) + *sum;
    *sum = t;
  }

  static constexpr uint8_t kFloatResult = 1;     // flags bit 0
  static constexpr uint8_t kHasIntegerPart = 2;  // flags bit 1

  uint64_t n_ = 0;
  uint64_t skipped_ = 0;
  bool float_result_ = false;
  WideSum wide_;
  double sum_ = 0;
  double correction_ = 0;
};

}  // namespace fanfold
