// group_table_test_util: small helpers for tests of GroupTable and what
// merges into it — a number group's key bytes, one record added to every
// measure of a group, a table's encoding. Test-only.
#pragma once

#include <cstdint>
#include <string>

#include "common/base/byte_io.h"
#include "common/partial/group_key.h"
#include "common/partial/group_table.h"

namespace fanfold {

inline std::string KeyOf(uint64_t g) {
  std::string key;
  AppendKeyValue(Value::Number(static_cast<double>(g)), &key);
  return key;
}

inline void AddRecord(GroupTable* t, uint64_t group, double x) {
  MeasureState* const* states = t->FindOrAdd(KeyOf(group));
  const Value v = Value::Number(x);
  for (size_t m = 0; m < t->measure_count(); ++m) states[m]->Add(&v);
}

inline std::string EncodeOf(const GroupTable& t) {
  std::string out;
  ByteWriter w(&out);
  t.Encode(w);
  return out;
}

}  // namespace fanfold
