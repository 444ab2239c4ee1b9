// Writes the seed corpus of fuzz_partial_decode into the directory given as
// argv[1]: a valid encoded partial state (mode 0) and a small one stored
// raw, its stored zstd body
// (mode 1), its decompressed body (mode 2), and the group table and each
// measure state's encoding on their own (mode 3). The states are filled with
// a deterministic mix of values that reaches every encoding form (sparse and
// dense HyperLogLog, exact and bounded top, negative/zero/positive DDSketch
// buckets, integer-only and mixed sums and moments, int64/uint64/double
// numbers in min/max and at_lowest/at_highest, histograms by edges and by
// width with counts below, within and above). Usage: fuzz_seed_partial DIR
#include <cstdio>
#include <fstream>
#include <string>
#include <vector>

#include "common/base/byte_io.h"
#include "common/partial/group_key.h"
#include "common/job/job_spec.h"
#include "common/partial/partial_codec.h"
#include "tests/fuzz/fuzz_measure_configs.h"

using namespace fanfold;

namespace {

bool Write(const std::string& dir, const std::string& name, char mode, std::string_view bytes) {
  std::ofstream f(dir + "/" + name, std::ios::binary);
  f.put(mode);
  f.write(bytes.data(), static_cast<std::streamsize>(bytes.size()));
  return static_cast<bool>(f);
}

}  // namespace

int main(int argc, char** argv) {
  if (argc != 2) {
    std::fprintf(stderr, "usage: fuzz_seed_partial DIR\n");
    return 2;
  }
  const std::string dir = argv[1];
  const std::vector<MeasureConfig> configs = FuzzMeasureConfigs();
  PartialState p(&configs);
  p.header.fingerprint = 0xF00D;
  p.header.shard_index = 3;
  p.header.records = 2100;
  p.header.kept = 2050;
  p.header.malformed = 1;
  p.header.path_hash = PathHash("/data/shard-0003.ndjson");
  p.samples.push_back({17, "unclosed string"});

  const char* kWords[] = {"amber", "birch", "cedar", "dune", "elm", "fern", "gale", "heath", "iris", "juniper"};
  // Group "small": few values, every state in its compact form; its numbers
  // are exact 64-bit integers (int64 and uint64), so sums and means keep an
  // integer part only. Group "big": enough values for dense HyperLogLog and
  // bounded top; doubles with a few integers mixed in.
  for (int g = 0; g < 2; ++g) {
    std::string key;
    AppendKeyValue(Value::String(g == 0 ? "small" : "big"), &key);
    AppendKeyValue(Value::Number(g), &key);
    MeasureState* const* states = p.reductions[0].groups.FindOrAdd(key);
    const int n = g == 0 ? 12 : 2000;
    for (int i = 0; i < n; ++i) {
      std::string text = std::string(kWords[i % 10]) + "-" + std::to_string(i % (g == 0 ? 5 : 997));
      Value num = Value::Number(i % 7 == 0 ? 0.0 : (i % 3 == 0 ? -1.0 : 1.0) * (0.5 + i * 1.25));
      if (g == 0) num = i % 2 == 0 ? Value::Uint(UINT64_MAX - static_cast<uint64_t>(i)) : Value::Int(-9007199254740993 - i);
      if (g == 1 && i % 11 == 0) num = Value::Int(9007199254740993 + i);
      Value str = Value::String(text);
      for (size_t j = 0; j < configs.size(); ++j) {
        const MeasureConfig& c = configs[j];
        Value args[2] = {num, g == 0 ? Value::Int(1772323200 + i) : Value::Number(1772323200.0 + i)};
        if (c.kind == MeasureKind::kDistinct || c.kind == MeasureKind::kHyperLogLog ||
            c.kind == MeasureKind::kTop || c.kind == MeasureKind::kAtLowest || c.kind == MeasureKind::kAtHighest)
          args[0] = g == 0 && i % 3 == 0 ? num : str;
        if (c.kind == MeasureKind::kCountPresent && i % 4 == 0) args[0] = Value::Null();
        // Keep the bounded exact states within their limits.
        if ((c.kind == MeasureKind::kQuantile || c.kind == MeasureKind::kDistinct) && i >= 40) continue;
        if (!states[j]->Add(args)) {
          std::fprintf(stderr, "measure %zu went past its bound\n", j);
          return 1;
        }
      }
    }
  }

  std::string encoded;
  EncodePartial(p, &encoded);
  bool ok = Write(dir, "partial_valid", 0, encoded);
  // A small partial too, whose body is stored raw (header flag bit 0).
  PartialState small(&configs);
  small.header = p.header;
  small.samples = p.samples;
  {
    std::string key;
    AppendKeyValue(Value::String("one"), &key);
    MeasureState* const* states = small.reductions[0].groups.FindOrAdd(key);
    for (size_t j = 0; j < configs.size(); ++j) {
      Value args[2] = {Value::Number(2.5), Value::Number(1772323200.0)};
      (void)states[j]->Add(args);
    }
  }
  std::string small_encoded;
  EncodePartial(small, &small_encoded);
  ok = ok && Write(dir, "partial_valid_raw", 0, small_encoded);
  ok = ok && Write(dir, "partial_stored_body", 1, std::string_view(encoded).substr(kPartialHeaderSize));

  std::string body;
  EncodePartialBody(p, &body);
  ok = ok && Write(dir, "partial_body", 2, body);

  std::string table;
  ByteWriter tw(&table);
  p.reductions[0].groups.Encode(tw);
  ok = ok && Write(dir, "group_table", 3, table);

  // Every state of group "small"; of group "big" only those whose form
  // differs (dense HyperLogLog registers, bounded top).
  for (size_t g = 0; g < p.reductions[0].groups.group_count(); ++g) {
    const bool small = p.reductions[0].groups.key(g).find("small") != std::string::npos;
    for (size_t j = 0; j < configs.size(); ++j) {
      const MeasureKind kind = configs[j].kind;
      if (!small && kind != MeasureKind::kHyperLogLog && kind != MeasureKind::kTop && kind != MeasureKind::kHistogram)
        continue;
      std::string state;
      ByteWriter sw(&state);
      p.reductions[0].groups.states(g)[j]->Encode(sw);
      std::string name = std::string("state_") + MeasureFnName(kind) + (small ? "_small" : "_big");
      if (kind == MeasureKind::kHyperLogLog) name += "_p" + std::to_string(configs[j].precision);
      if (kind == MeasureKind::kHistogram) name += configs[j].edges.empty() ? "_width" : "_edges";
      ok = ok && Write(dir, name, 3, state);
    }
  }
  if (!ok) {
    std::fprintf(stderr, "cannot write seeds into %s\n", dir.c_str());
    return 1;
  }
  PartialState check(&configs);
  Status s = DecodePartial(encoded, &check);
  if (!s.ok()) {
    std::fprintf(stderr, "seed does not decode: %s\n", s.message().c_str());
    return 1;
  }
  return 0;
}
