// Helpers shared by the measure tests: a reproducible generator (the same
// rule is used by the Python scripts that computed the embedded reference
// values), input rows that own their strings, and the split / encode /
// decode / merge harness that every measure's merge test goes through.
#pragma once

#include <algorithm>
#include <deque>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include <doctest/doctest.h>

#include "common/measures/measure.h"
#include "common/measures/measure_registry.h"

namespace fanfold::testing {

// 64-bit LCG (Knuth's MMIX constants); Next() returns the top 31 bits.
// Python twin: s = (s*6364136223846793005 + 1442695040888963407) % 2**64;
// return s >> 33.
class TestLcg {
 public:
  explicit TestLcg(uint64_t seed) : s_(seed) {}
  uint64_t Next() {
    s_ = s_ * 6364136223846793005ULL + 1442695040888963407ULL;
    return s_ >> 33;
  }
  // Uniform in [0, 1) with 53 random bits (two draws).
  double Uniform() {
    const uint64_t hi = Next(), lo = Next();
    return static_cast<double>(((hi << 31) | lo) >> 9) * 0x1p-53;
  }

 private:
  uint64_t s_;
};

// Rows of up to two arguments; strings live in the row set.
class Rows {
 public:
  void Add(Value a, Value b = Value::Missing()) { rows_.push_back({a, b}); }
  void AddNumber(double x) { Add(Value::Number(x)); }
  // Copies s into storage that lives as long as this object.
  std::string_view Keep(std::string s) { return pool_.emplace_back(std::move(s)); }
  void AddString(std::string s) { Add(Value::String(Keep(std::move(s)))); }
  size_t size() const { return rows_.size(); }
  const Value* args(size_t i) const { return rows_[i].v; }

 private:
  struct Row {
    Value v[2];
  };
  std::vector<Row> rows_;
  std::deque<std::string> pool_;
};

// Values of all three countable types with a skewed, tie-rich frequency
// profile: 109 distinct values among 20000. TestLcg(5); Python twin:
//   r = g.next() % 1000; j = r*r // 10000; t = g.next() % 10
//   t < 6: the string str(j); t < 9: the number float(j % 7); else the bool j % 2 == 0
inline Rows TypedValueData() {
  TestLcg g(5);
  Rows rows;
  for (int i = 0; i < 20000; ++i) {
    const uint64_t r = g.Next() % 1000;
    const uint64_t j = r * r / 10000;
    const uint64_t t = g.Next() % 10;
    if (t < 6)
      rows.AddString(std::to_string(j));
    else if (t < 9)
      rows.AddNumber(static_cast<double>(j % 7));
    else
      rows.Add(Value::Bool(j % 2 == 0));
  }
  return rows;
}

// One measure of every registered kind (a new kind is covered unedited),
// with options that exercise them: quantiles, precision, k, limit, edges.
inline std::vector<MeasureConfig> AllKindConfigs() {
  std::vector<MeasureConfig> configs;
  for (const MeasureRow& row : MeasureRows()) {
    MeasureConfig c;
    c.kind = row.kind;
    c.probabilities = {0.1, 0.5, 0.99};
    c.precision = 8;
    c.k = 3;
    c.limit = 100000;
    c.edges = {-1000, -0.5, 0, 10, 1000, 1e17};
    configs.push_back(c);
  }
  return configs;
}

// A value of every sort, drawn from g (one or two draws): rounding-sensitive
// magnitudes, text (kept in strings), integers, missing, negatives.
inline Value MixedValue(TestLcg& g, Rows& strings) {
  switch (g.Next() % 6) {
    case 0: return Value::Number(1e16);
    case 1: return Value::Number(1.0 + static_cast<double>(g.Next() % 1000) * 0.1);
    case 2: return Value::String(strings.Keep("w" + std::to_string(g.Next() % 7)));
    case 3: return Value::Int(static_cast<int64_t>(g.Next() % 50));
    case 4: return Value::Missing();
    default: return Value::Number(-static_cast<double>(g.Next() % 300) / 7.0);
  }
}

inline std::string EncodeOf(const MeasureState& s) {
  std::string out;
  ByteWriter w(&out);
  s.Encode(w);
  return out;
}

// Decodes bytes into a fresh state of config; REQUIREs success and that
// exactly the encoding was consumed.
inline std::unique_ptr<MeasureState> DecodeOf(const MeasureConfig& config, const std::string& bytes) {
  auto s = NewMeasureState(config);
  ByteReader r(bytes);
  const Status st = s->Decode(r);
  REQUIRE_MESSAGE(st.ok(), st.message());
  REQUIRE(r.at_end());
  return s;
}

inline std::unique_ptr<MeasureState> Whole(const MeasureConfig& config, const Rows& rows) {
  auto s = NewMeasureState(config);
  bool added = true;
  for (size_t i = 0; i < rows.size(); ++i) added = s->Add(rows.args(i)) && added;
  REQUIRE(added);
  return s;
}

// Cuts rows at `shards - 1` random points (empty shards allowed), builds one
// state per shard, passes each through Encode -> Decode, and folds them in
// order with Merge, as the coordinator does.
inline std::unique_ptr<MeasureState> SplitMerged(const MeasureConfig& config, const Rows& rows,
                                                 int shards, TestLcg& rng) {
  std::vector<size_t> cuts{0, rows.size()};
  for (int i = 1; i < shards; ++i) cuts.push_back(rows.size() == 0 ? 0 : rng.Next() % (rows.size() + 1));
  std::sort(cuts.begin(), cuts.end());
  std::unique_ptr<MeasureState> acc;
  for (size_t c = 0; c + 1 < cuts.size(); ++c) {
    auto part = NewMeasureState(config);
    bool added = true;
    for (size_t i = cuts[c]; i < cuts[c + 1]; ++i) added = part->Add(rows.args(i)) && added;
    REQUIRE(added);
    auto decoded = DecodeOf(config, EncodeOf(*part));
    if (!acc) {
      acc = std::move(decoded);
    } else {
      const Status st = acc->Merge(*decoded);
      REQUIRE_MESSAGE(st.ok(), st.message());
    }
  }
  return acc;
}

inline std::vector<Cell> FinalOf(const MeasureState& s) {
  std::vector<Cell> out;
  s.Finalize(&out);
  return out;
}

}  // namespace fanfold::testing
