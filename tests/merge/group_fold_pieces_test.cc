// FoldRanges with drains over a run held as pieces (what a spilled run is):
// the same groups as FoldEncoded's single encoding, whatever the key ranges;
// a drain that fails ends the fold without blaming a partial.
#include <doctest/doctest.h>

#include <string>
#include <vector>

#include "common/base/byte_io.h"
#include "common/partial/group_key.h"
#include "common/partial/group_table.h"
#include "coordinator/merge/group_fold.h"

namespace fanfold {
namespace {

std::vector<MeasureConfig> CountSum() {
  std::vector<MeasureConfig> c(2);
  c[0].kind = MeasureKind::kCount;
  c[1].kind = MeasureKind::kSum;
  return c;
}

// Shard s: `keys` keys from s * keys / 2 on (each shard meets the previous
// one's upper half), values whose float sum depends on the fold order.
std::string Shard(const std::vector<MeasureConfig>* configs, int s, int keys) {
  GroupTable t(configs);
  for (int k = 0; k < keys; ++k) {
    std::string key;
    AppendKeyValue(Value::Number(static_cast<double>(s * keys / 2 + k)), &key);
    const Value v = Value::Number(s % 2 == 0 ? 1e16 : 0.1 * (k % 97) + s);
    MeasureState* const* st = t.FindOrAdd(key);
    for (size_t m = 0; m < configs->size(); ++m) st[m]->Add(&v);
  }
  std::string out;
  ByteWriter w(&out);
  t.Encode(w);
  return out;
}

// Intent: batches folded over 1-3 key ranges, each range drained into its
// own piece (the drain called many times, as the output passes 256 KiB),
// and the pieces fed to the next fold as its base, end with the groups of
// the whole fold done at once into one encoding.
TEST_CASE("group_fold: pieces and drains give the single encoding's groups") {
  const std::vector<MeasureConfig> configs = CountSum();
  std::vector<std::string> shards;
  for (int s = 0; s < 6; ++s) shards.push_back(Shard(&configs, s, 30000));
  FoldInputs all;
  for (const std::string& s : shards) all.partials.push_back(s);
  std::string expected;
  REQUIRE(FoldEncoded(&configs, all, 1, &expected).status.ok());
  for (size_t threads : {1, 2, 3}) {
    CAPTURE(threads);
    std::vector<std::string> run;  // the pieces so far
    std::vector<uint64_t> run_groups;
    int drained = 0;
    for (size_t first = 0; first < shards.size(); first += 2) {
      FoldInputs in;
      for (size_t i = 0; i < run.size(); ++i) in.base_pieces.push_back({run[i], run_groups[i], nullptr});
      in.partials = {shards[first], shards[first + 1]};
      const std::vector<KeyRange> ranges = CutRanges(in, configs.size(), threads);
      std::vector<std::string> buffers(ranges.size()), pieces(ranges.size());
      std::vector<std::string*> outs;
      std::vector<GroupFold::Drain> drains;
      for (size_t i = 0; i < ranges.size(); ++i) {
        outs.push_back(&buffers[i]);
        drains.push_back([&pieces, &drained, i](std::string* out) {
          pieces[i] += *out;
          out->clear();
          ++drained;
          return Status::Ok();
        });
      }
      std::vector<uint64_t> groups;
      const FoldOutcome o = FoldRanges(&configs, in, ranges, outs, drains, &groups);
      REQUIRE(o.status.ok());
      for (const std::string& b : buffers) CHECK(b.empty());  // everything went through the drains
      run = std::move(pieces);
      run_groups = groups;
    }
    CHECK(drained > 3);
    std::string whole;
    ByteWriter w(&whole);
    uint64_t total = 0;
    for (uint64_t g : run_groups) total += g;
    w.Varint(total);
    for (const std::string& p : run) w.Bytes(p);
    CHECK(whole == expected);
  }
}

// Intent: a failing drain (a full disk under a spill file) ends the fold
// with its status and blames no partial, so the caller does not drop one.
TEST_CASE("group_fold: a failing drain ends the fold without blaming a partial") {
  const std::vector<MeasureConfig> configs = CountSum();
  const std::string a = Shard(&configs, 0, 30000), b = Shard(&configs, 1, 30000);
  FoldInputs in;
  in.partials = {a, b};
  const std::vector<KeyRange> ranges = CutRanges(in, configs.size(), 1);
  std::string buffer;
  const std::vector<GroupFold::Drain> drains = {[](std::string*) { return Status::IoError("disk full"); }};
  std::vector<uint64_t> groups;
  const FoldOutcome o = FoldRanges(&configs, in, ranges, {&buffer}, drains, &groups);
  CHECK(o.status.code() == Status::Code::kIoError);
  CHECK(o.bad_partial == FoldOutcome::kNoPartial);
}

}  // namespace
}  // namespace fanfold
