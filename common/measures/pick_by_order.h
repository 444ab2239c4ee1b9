// PickByOrderState: the state of `at_lowest` and `at_highest` — the value at the
// smallest (first) or largest (last) ordering key, with that key. Keys
// compare numbers numerically and exactly (a string that Value::AsNumeric
// accepts counts as a number, so CSV epoch times order correctly; integers
// against doubles as mathematics orders them, CompareNumbers) and other
// strings bytewise (ISO 8601 times order correctly); every number sorts
// before every string. Numbers, keys and values, are kept exactly as read
// (an int64/uint64 or a double; NumberEncoding). On equal keys `at_lowest` keeps the earliest input and `at_highest`
// the latest; in Merge the other state is the later input. Records with no
// usable key (missing, null, bool, object, NaN) or no scalar value (missing,
// null, object) are skipped. Single-threaded.
#pragma once

#include <string>

#include "common/measures/measure.h"

namespace fanfold {

class PickByOrderState final : public MeasureState {
 public:
  // highest: true for kAtHighest, false for kAtLowest.
  explicit PickByOrderState(bool highest) : highest_(highest) {}

  // args: [value, ordering key].
  bool Add(const Value* args) override;
  Status Merge(const MeasureState& other) override;
  // Encoding: varint skipped, u8 has (0|1), then iff has:
  //   key:   number (u8 'n' f64 | u8 'i' i64 | u8 'u' u64) | u8 's' string
  //   value: u8 'b' u8(0|1) | number | u8 's' string
  void Encode(ByteWriter& w) const override;
  Status Decode(ByteReader& r) override;
  // The captured value as a String, Int (exact), Float or Bool cell; Null if none.
  void Finalize(std::vector<Cell>* out) const override;
  uint64_t skipped() const override { return skipped_; }

 private:
  // An ordering key or a captured value: a tagged scalar that owns its text.
  struct Slot {
    ValueKind kind = ValueKind::kMissing;  // kNumber, kString (or kBool: values)
    bool boolean = false;
    Value number;  // kNumber: the number as read (never NaN, never -0.0)
    std::string str;
  };
  // <0, 0, >0 as key a sorts before, with, after key b.
  static int CompareKeys(ValueKind a_kind, const Value& a_num, std::string_view a_str, const Slot& b);
  // True iff a record with this key replaces the one held.
  bool Takes(int cmp) const { return !has_ || (highest_ ? cmp >= 0 : cmp < 0); }
  static void EncodeSlot(const Slot& s, ByteWriter& w);
  static bool DecodeSlot(ByteReader& r, bool allow_bool, Slot* s);

  bool highest_;
  bool has_ = false;
  uint64_t skipped_ = 0;
  Slot key_;
  Slot value_;
};

}  // namespace fanfold
