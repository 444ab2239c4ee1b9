// Test helpers shared by the reader tests: a short text form of a slot and
// a sink that keeps every record as "slot0|slot1|...", so whole records
// compare as strings.
#pragma once

#include <cstdint>
#include <cstdio>
#include <string>
#include <vector>

#include "common/input/record_reader.h"
#include "common/base/number_text.h"
#include "common/base/value.h"

namespace fanfold {
namespace {

// A short text form of a slot, so whole records compare as strings; exact
// integers print their digits, other numbers as "%.17g".
inline std::string Show(const Value& v) {
  char buf[40];
  switch (v.kind) {
    case ValueKind::kMissing: return "-";
    case ValueKind::kNull: return "null";
    case ValueKind::kBool: return v.boolean ? "true" : "false";
    case ValueKind::kNumber:
      if (v.is_integer()) {  // exact digits, as Python's str(int) prints them
        std::string digits;
        AppendWideInt(v.Wide(), &digits);
        return digits;
      }
      std::snprintf(buf, sizeof buf, "%.17g", v.number);
      return buf;
    case ValueKind::kString: return "'" + std::string(v.str) + "'";
    case ValueKind::kOther: return "{}";
  }
  return "?";
}

// Keeps every record as "slot0|slot1|..." (raw slots only).
class Collect : public RecordSink {
 public:
  explicit Collect(size_t n, size_t stop_after = SIZE_MAX) : n_(n), stop_after_(stop_after) {}
  bool OnRecord(Value* slots) override {
    std::string row;
    for (size_t i = 0; i < n_; ++i) row += (i ? "|" : "") + Show(slots[i]);
    rows.push_back(row);
    return rows.size() < stop_after_;
  }
  std::vector<std::string> rows;

 private:
  size_t n_;
  size_t stop_after_;
};

}  // namespace
}  // namespace fanfold
