#include "coordinator/run/shard_scheduler.h"

#include <algorithm>
#include <cstdlib>
#include <numeric>

namespace fanfold {

Result<std::vector<uint32_t>> DispatchOrder(const std::vector<Shard>& shards, int workers) {
  std::vector<uint32_t> order(shards.size());
  std::iota(order.begin(), order.end(), 0);
  // Small shards weigh 0: after every big one, in index order (the sort is stable).
  const auto weight = [&](uint32_t s) { return shards[s].bytes() >= kSmallShardBytes ? shards[s].bytes() : 0; };
  if (workers > 1)
    std::stable_sort(order.begin(), order.end(), [&](uint32_t a, uint32_t b) { return weight(a) > weight(b); });
  const char* sw = std::getenv("FANFOLD_TEST_ONLY_DISPATCH");
  if (sw == nullptr || *sw == '\0') return order;
  std::string mode(sw);
  if (mode == "reverse") {
    std::reverse(order.begin(), order.end());
  } else if (mode.rfind("shuffle:", 0) == 0) {
    char* end = nullptr;
    uint64_t seed = std::strtoull(mode.c_str() + 8, &end, 10);
    if (end == mode.c_str() + 8 || *end != '\0')
      return Status::InvalidArgument("FANFOLD_TEST_ONLY_DISPATCH: expected shuffle:<integer seed>, found '" + mode + "'");
    // splitmix64-driven Fisher-Yates: the same seed gives the same order everywhere.
    auto next = [&seed]() {
      uint64_t z = (seed += 0x9E3779B97F4A7C15ull);
      z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
      z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
      return z ^ (z >> 31);
    };
    for (size_t i = order.size(); i > 1; --i) std::swap(order[i - 1], order[next() % i]);
  } else {
    return Status::InvalidArgument("FANFOLD_TEST_ONLY_DISPATCH: expected 'reverse' or 'shuffle:SEED', found '" + mode + "'");
  }
  return order;
}

}  // namespace fanfold
