#include "coordinator/rundir/shard_matcher.h"

#include <algorithm>
#include <map>
#include <set>
#include <tuple>

namespace fanfold {

ShardMatch MatchShards(const RunManifest& before, const ShardList& now, uint32_t first_free_slot) {
  using Key = std::tuple<std::string, uint64_t, uint64_t>;  // path, offset, length
  std::map<Key, uint32_t> old_by_key;
  for (const Shard& s : before.shards.shards) old_by_key.emplace(Key{s.path, s.offset, s.length}, s.index);
  ShardMatch m;
  m.slots.resize(now.shards.size());
  m.kept.assign(now.shards.size(), false);
  std::vector<bool> old_kept(before.shards.shards.size(), false);
  std::set<std::string> now_paths, computed;
  uint32_t next = first_free_slot;
  for (size_t i = 0; i < now.shards.size(); ++i) {
    const Shard& s = now.shards[i];
    now_paths.insert(s.path);
    auto it = old_by_key.find(Key{s.path, s.offset, s.length});
    if (it != old_by_key.end()) {
      const Shard& old = before.shards.shards[it->second];
      if (old.file_size == s.file_size && old.mtime_ns == s.mtime_ns) {
        m.slots[i] = before.SlotOf(it->second);
        m.kept[i] = true;
        old_kept[it->second] = true;
        continue;
      }
    }
    m.slots[i] = next++;
    computed.insert(s.path);
  }
  std::set<std::string> dropped;
  for (const Shard& s : before.shards.shards) {
    if (old_kept[s.index]) continue;
    if (now_paths.count(s.path)) {
      m.replaced.push_back(s.index);
    } else {
      m.dropped.push_back(s.index);
      dropped.insert(s.path);
    }
  }
  m.dropped_paths.assign(dropped.begin(), dropped.end());
  m.computed_paths.assign(computed.begin(), computed.end());
  return m;
}

}  // namespace fanfold
