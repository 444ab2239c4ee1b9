// group_table_test_util: small helpers for tests of GroupTable and what
// merges into it — a number group's key bytes, one record added to every
// measure of a group, a table's encoding, and ShardTables: shards' tables
// over every sort of value (testing::MixedValue). Test-only.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "common/base/byte_io.h"
#include "common/partial/group_key.h"
#include "common/partial/group_table.h"
#include "tests/measures/measure_test_util.h"

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

// `shards` shards' group tables over `keys` keys: early shards hold the
// low keys, later ones bring new keys, values mix magnitudes so that sums
// round differently in another order, and text and ties feed the others
// (every measure gets a value and a tie-rich ordering key).
inline std::vector<std::string> ShardTables(const std::vector<MeasureConfig>* configs, int shards, uint64_t keys,
                                            int records) {
  testing::TestLcg g(77);
  std::vector<std::string> out;
  testing::Rows strings;
  for (int s = 0; s < shards; ++s) {
    GroupTable t(configs);
    const uint64_t span = keys * static_cast<uint64_t>(s + 1) / static_cast<uint64_t>(shards);
    for (int i = 0; i < records; ++i) {
      MeasureState* const* states = t.FindOrAdd(KeyOf(g.Next() % span));
      Value args[2];
      args[0] = testing::MixedValue(g, strings);
      args[1] = Value::Number(static_cast<double>(g.Next() % 20));  // ordering key, tie-rich
      for (size_t m = 0; m < configs->size(); ++m) REQUIRE(states[m]->Add(args));
    }
    out.push_back(EncodeOf(t));
  }
  return out;
}

}  // namespace fanfold
