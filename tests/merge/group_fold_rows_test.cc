// GroupFold::FoldRangeTo, the fold straight into rows: for every measure
// kind, the states it hands over finalize to the very cells (and skipped
// and degraded counts) that the same fold written as a run gives once its
// states are decoded again, over 1, 2 and 3 key ranges, with the base run
// in memory; a bad partial and a failing visitor are told apart.
#include "coordinator/merge/group_fold.h"

#include <doctest/doctest.h>

#include <string>
#include <vector>

#include "common/base/cell_text.h"
#include "common/measures/measure_registry.h"
#include "common/partial/group_key.h"
#include "common/partial/group_table.h"
#include "tests/measures/measure_test_util.h"

namespace fanfold {
namespace {

using testing::TestLcg;

// Shard tables over up to 400 numeric keys, values of every sort (rounding-
// sensitive sums, text, integers, missing, tie-rich ordering keys).
std::vector<std::string> Tables(const std::vector<MeasureConfig>* configs, int shards) {
  TestLcg g(41);
  testing::Rows strings;
  std::vector<std::string> out;
  for (int s = 0; s < shards; ++s) {
    GroupTable t(configs);
    for (int i = 0; i < 500; ++i) {
      std::string key;
      AppendKeyValue(Value::Number(static_cast<double>(g.Next() % (100 + 60 * static_cast<uint64_t>(s)))), &key);
      MeasureState* const* states = t.FindOrAdd(key);
      Value args[2];
      args[0] = testing::MixedValue(g, strings);
      args[1] = Value::Number(static_cast<double>(g.Next() % 20));
      for (size_t m = 0; m < configs->size(); ++m) REQUIRE(states[m]->Add(args));
    }
    std::string enc;
    ByteWriter w(&enc);
    t.Encode(w);
    out.push_back(std::move(enc));
  }
  return out;
}

// A group's key and finalized cells as text, with its skipped/degraded counts.
std::string RowText(std::string_view key, const std::vector<std::unique_ptr<MeasureState>>& states) {
  std::vector<Cell> row;
  for (const auto& s : states) s->Finalize(&row);
  std::string text = std::to_string(key.size()) + ":";
  text.append(key);
  for (const Cell& c : row) text += " " + CellJson(c);
  for (const auto& s : states) text += " /" + std::to_string(s->skipped()) + (s->degraded() ? "d" : "");
  return text + "\n";
}

// Intent: straight into rows = into a run, then decoded, for every kind.
TEST_CASE("group_fold: folded straight into rows, states finalize as the run's decoded ones") {
  const std::vector<MeasureConfig> configs = testing::AllKindConfigs();
  const std::vector<std::string> tables = Tables(&configs, 7);
  // The base: the first three shards folded into a run.
  FoldInputs first;
  for (int s = 0; s < 3; ++s) first.partials.push_back(tables[s]);
  std::string base;
  REQUIRE(FoldEncoded(&configs, first, 2, &base).status.ok());
  FoldInputs in;
  in.base = base;
  for (int s = 3; s < 7; ++s) in.partials.push_back(tables[s]);
  // The usual way: the whole fold as a run, each group's states decoded.
  std::string run;
  REQUIRE(FoldEncoded(&configs, in, 1, &run).status.ok());
  std::string expected;
  {
    EncodedGroupCursor c(run, configs.size());
    std::vector<std::unique_ptr<MeasureState>> states;
    for (const MeasureConfig& cfg : configs) states.push_back(NewMeasureState(cfg));
    while (c.Next()) {
      for (size_t m = 0; m < states.size(); ++m) {
        ByteReader r(c.state(m));
        REQUIRE(states[m]->Decode(r).ok());
      }
      expected += RowText(c.key(), states);
    }
    REQUIRE(c.status().ok());
  }
  REQUIRE(expected.size() > 1000);
  for (size_t threads : {1u, 2u, 3u}) {
    CAPTURE(threads);
    std::string got;
    for (const KeyRange& range : CutRanges(in, configs.size(), threads, kSeekShareIntoRows)) {
      bool visit_failed = true;
      const FoldOutcome o = GroupFold(&configs).FoldRangeTo(
          in, range,
          [&](std::string_view key, const std::vector<std::unique_ptr<MeasureState>>& states) {
            got += RowText(key, states);
            return Status::Ok();
          },
          &visit_failed);
      REQUIRE(o.status.ok());
      CHECK_FALSE(visit_failed);
    }
    CHECK(got == expected);
  }
}

// Intent: a partial cut short is named as the bad partial (not the
// visitor's failure); a visitor's error ends the fold as its own.
TEST_CASE("group_fold: straight into rows tells a bad partial from a visitor's error") {
  const std::vector<MeasureConfig> configs = testing::AllKindConfigs();
  std::vector<std::string> tables = Tables(&configs, 3);
  FoldInputs in;
  in.partials = {tables[0], tables[1], tables[2]};
  std::string cut = tables[1];
  cut.pop_back();  // the last group's last state short
  in.partials[1] = cut;
  bool visit_failed = true;
  int rows = 0;
  const GroupFold::Visit count = [&](std::string_view, const std::vector<std::unique_ptr<MeasureState>>&) {
    ++rows;
    return Status::Ok();
  };
  FoldOutcome o = GroupFold(&configs).FoldRangeTo(in, KeyRange{}, count, &visit_failed);
  CHECK_FALSE(o.status.ok());
  CHECK(o.bad_partial == 1);
  CHECK_FALSE(visit_failed);
  in.partials[1] = tables[1];
  rows = 0;
  o = GroupFold(&configs).FoldRangeTo(
      in, KeyRange{},
      [&](std::string_view, const std::vector<std::unique_ptr<MeasureState>>&) {
        return ++rows == 5 ? Status::IoError("disk full") : Status::Ok();
      },
      &visit_failed);
  CHECK(o.status.code() == Status::Code::kIoError);
  CHECK(o.bad_partial == FoldOutcome::kNoPartial);
  CHECK(visit_failed);
  CHECK(rows == 5);
}

}  // namespace
}  // namespace fanfold
