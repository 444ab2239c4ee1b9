// Review checks of the session's merged lanes (reviewer's branch `review`):
// each case pins a claim a contract comment makes, so that the claim and the
// code cannot drift apart silently. Sources are the contract comments named
// beside each check.
#include <doctest/doctest.h>

#include <string>
#include <vector>

#include "common/partial/worker_group_table.h"

namespace fanfold {
namespace {

// Claim (common/partial/worker_group_table.cc, Reserve; docs/worker-table-budget.md):
// "The index's slots ... stay within a quarter of the budget". A presized
// table's index counts toward its budget, so a larger index turns the table
// full earlier (more records to the overflow files) than the documented bound.
TEST_CASE("review: a presized index stays within a quarter of its table's budget") {
  std::vector<MeasureConfig> count_only(1);  // kind defaults to count
  for (size_t budget = 4096; budget <= (size_t{64} << 20); budget = budget * 5 / 4) {
    CAPTURE(budget);
    WorkerGroupTable t(&count_only);
    t.set_budget(budget);
    t.Reserve(size_t{1} << 30);  // the previous shard held far more groups than fit
    CHECK(t.ApproxBytes() <= budget / 4);
  }
}

}  // namespace
}  // namespace fanfold
