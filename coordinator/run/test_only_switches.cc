#include "coordinator/run/test_only_switches.h"

#include <cstdlib>
#include <string>

namespace fanfold {

// FANFOLD_TEST_ONLY_MERGE_RUNS=GROUPS[:THREADS] (tests only, never for
// users): the merger moves its results to sorted runs past GROUPS groups and
// folds them over THREADS key ranges, so small test jobs take that path;
// GROUPS "cap" keeps the memory share's rule (with THREADS ranges).
Status ApplyTestOnlyMergeRuns(Merger* merger, size_t* threads_out) {
  const char* sw = std::getenv("FANFOLD_TEST_ONLY_MERGE_RUNS");
  if (sw == nullptr || *sw == '\0') return Status::Ok();
  const std::string text(sw);
  char* end = nullptr;
  const bool by_cap = text.rfind("cap", 0) == 0;
  const uint64_t groups = by_cap ? Merger::kRunsByBudget : std::strtoull(text.c_str(), &end, 10);
  if (by_cap) end = const_cast<char*>(text.c_str()) + 3;
  uint64_t threads = 1;
  if (end != text.c_str() && *end == ':') {
    const char* t = end + 1;
    threads = std::strtoull(t, &end, 10);
    if (end == t || threads < 1 || threads > 64) end = nullptr;
  }
  if (end == nullptr || end == text.c_str() || *end != '\0')
    return Status::InvalidArgument("FANFOLD_TEST_ONLY_MERGE_RUNS: expected GROUPS or GROUPS:THREADS (1 to 64; GROUPS \"cap\": by the memory cap), found '" +
                                   text + "'");
  merger->SetRunThreshold(groups, static_cast<size_t>(threads));
  *threads_out = static_cast<size_t>(threads);
  return Status::Ok();
}

// FANFOLD_TEST_ONLY_MERGE_THREADS=N (tests only, never for users): the
// merger merges each partial on N threads (1 to 64) instead of the machine's
// hardware threads, so tests can show the bytes do not depend on it.
Status ApplyTestOnlyMergeThreads(Merger* merger) {
  const char* sw = std::getenv("FANFOLD_TEST_ONLY_MERGE_THREADS");
  if (sw == nullptr || *sw == '\0') return Status::Ok();
  char* end = nullptr;
  const uint64_t threads = std::strtoull(sw, &end, 10);
  if (end == sw || *end != '\0' || threads < 1 || threads > 64)
    return Status::InvalidArgument("FANFOLD_TEST_ONLY_MERGE_THREADS: expected a thread count from 1 to 64, found '" +
                                   std::string(sw) + "'");
  merger->SetThreads(static_cast<size_t>(threads));
  return Status::Ok();
}

// FANFOLD_TEST_ONLY_STRAIGHT_FOLD=0|1 (tests only): 0 makes the merge
// fold its last batch into a run before the output stage walks it, as it
// did before the last fold went straight into the output, so tests can
// compare both paths byte for byte. Unset: 1.
Result<bool> TestOnlyStraightFold() {
  const char* sw = std::getenv("FANFOLD_TEST_ONLY_STRAIGHT_FOLD");
  if (sw == nullptr || *sw == '\0') return true;
  const std::string v(sw);
  if (v != "0" && v != "1")
    return Status::InvalidArgument("FANFOLD_TEST_ONLY_STRAIGHT_FOLD: expected 0 or 1, found '" + v + "'");
  return v == "1";
}

// FANFOLD_TEST_ONLY_WORKER_TABLE_BYTES=BYTES (tests only): every task tells
// its worker to keep its group tables within BYTES instead of the memory
// cap's worker share, so small test jobs take the overflow path
// (common/partial/table_overflow.h). Unset: 0, the share.
Result<uint64_t> TestOnlyWorkerTableBytes() {
  const char* sw = std::getenv("FANFOLD_TEST_ONLY_WORKER_TABLE_BYTES");
  if (sw == nullptr || *sw == '\0') return uint64_t{0};
  char* end = nullptr;
  const uint64_t bytes = std::strtoull(sw, &end, 10);
  if (end == sw || *end != '\0' || bytes == 0)
    return Status::InvalidArgument("FANFOLD_TEST_ONLY_WORKER_TABLE_BYTES: expected a positive byte count, found '" +
                                   std::string(sw) + "'");
  return bytes;
}

}  // namespace fanfold
