// merger_test_util: MergerText, a merger's finished first reduction as one
// comparable string (every cell's number, floats marked), for tests that
// compare merges made in different ways; CountSumSketchPlan, the merger
// tests' plan; MadePartial, an encoded partial of given keys and values, and
// DisjointPartial, one whose keys no other shard has; WrapBody, a partial
// around a forged body. Test-only; REQUIRES what Merger::Finish requires.
#pragma once

#include <doctest/doctest.h>
#include <zstd.h>

#include <cstring>

#include <memory>
#include <string>
#include <vector>

#include "common/job/job_spec.h"
#include "common/partial/group_key.h"
#include "common/partial/partial_codec.h"

#include "coordinator/run/merger.h"

namespace fanfold {

inline std::string MergerText(Merger& merger) {
  Result<OutputTable> t = merger.Finish(0);
  REQUIRE(t.ok());
  std::string text;
  for (const auto& row : t->rows)
    for (const Cell& c : row) text += std::to_string(c.number) + (c.kind == Cell::Kind::kFloat ? "f " : " ");
  return text;
}

// The merger tests' plan: per {/k}, count, sum and a DDSketch of {/v}.
inline std::unique_ptr<Plan> CountSumSketchPlan() {
  const char* job = R"({"inputs": {"files": ["x.ndjson"]}, "group": ["{/k}"],
    "measures": [{"name": "n", "fn": "count"}, {"name": "s", "fn": "sum", "of": "{/v}"},
                 {"name": "q", "fn": "ddsketch", "of": "{/v}", "at": [0.5]}]})";
  Result<JobSpec> spec = ParseJobSpec(job, "test.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(*spec), RecordFormat::kNdjson);
  REQUIRE(plan.ok());
  return std::move(*plan);
}

// Shard `shard`'s encoded partial of a plan's first reduction (one numeric
// key): `groups` groups, group g keyed key_of(g) and every measure fed
// value_of(g) once; records = groups.
template <typename KeyOf, typename ValueOf>
std::string MadePartial(const Plan& plan, uint32_t shard, int groups, KeyOf key_of, ValueOf value_of) {
  std::vector<MeasureConfig> configs;
  for (const auto& m : plan.reductions[0].measures) configs.push_back(m.config);
  PartialState p(&configs);
  p.header.fingerprint = plan.fingerprint;
  p.header.shard_index = shard;
  p.header.records = static_cast<uint64_t>(groups);
  for (int g = 0; g < groups; ++g) {
    std::string key;
    AppendKeyValue(Value::Number(key_of(g)), &key);
    MeasureState* const* states = p.reductions[0].groups.FindOrAdd(key);
    const Value v = value_of(g);
    for (size_t m = 0; m < configs.size(); ++m) states[m]->Add(&v);
  }
  std::string out;
  EncodePartial(p, &out);
  return out;
}

// Shard s of a plan's first reduction (one numeric key) with disjoint keys:
// `groups` groups, keys s*groups .. s*groups+groups-1, so the runs grow by
// every partial; every measure takes the value 0.1 * g + s of group g.
inline std::string DisjointPartial(const Plan& plan, uint32_t shard, int groups) {
  return MadePartial(
      plan, shard, groups, [&](int g) { return static_cast<double>(shard * groups + g); },
      [&](int g) { return Value::Number(0.1 * g + shard); });
}

// A partial around `body` (uncompressed), with the header of `like` and a
// checksum that holds: what a buggy worker or a forger could hand over.
// Layout: common/partial/partial_codec.h (flags at 20, lengths at 104 and 112).
inline std::string WrapBody(const std::string& like, const std::string& body) {
  std::string z(ZSTD_compressBound(body.size()), '\0');
  z.resize(ZSTD_compress(z.data(), z.size(), body.data(), body.size(), 1));
  std::string out = like.substr(0, kPartialHeaderSize) + z;
  const uint64_t raw_len = body.size(), z_len = z.size();
  std::memcpy(out.data() + 104, &raw_len, 8);
  std::memcpy(out.data() + 112, &z_len, 8);
  const uint32_t flags = 0;  // the body is zstd-compressed, whatever `like` stored
  std::memcpy(out.data() + 20, &flags, 4);
  SetPartialEncodeTime(0, &out);  // reseals the checksum over the header and the new body
  return out;
}

}  // namespace fanfold
