// MatchShards: which shards a refresh keeps, computes and drops.
#include "coordinator/rundir/shard_matcher.h"

#include <doctest/doctest.h>

namespace fanfold {
namespace {

Shard Make(uint32_t index, const std::string& path, uint64_t size, int64_t mtime, uint64_t offset = 0,
           uint64_t length = UINT64_MAX) {
  Shard s;
  s.index = index;
  s.path = path;
  s.file_size = size;
  s.mtime_ns = mtime;
  s.offset = offset;
  s.length = length;
  return s;
}

// Intent: an hour added before, one after, one gone and one rewritten: the
// unchanged shards keep their slots (whatever their new index), the others
// get fresh slots from first_free_slot up in list order, the gone file is
// dropped and the rewritten one replaced.
TEST_CASE("shard matcher: added, gone and changed files") {
  RunManifest before;
  before.shards.shards = {Make(0, "/d/h01", 10, 1), Make(1, "/d/h02", 20, 1), Make(2, "/d/h03", 30, 1),
                          Make(3, "/d/h04", 40, 1)};
  before.slots = {4, 1, 2, 3};
  ShardList now;
  now.shards = {Make(0, "/d/h00", 5, 2), Make(1, "/d/h01", 10, 1), Make(2, "/d/h03", 30, 1),
                Make(3, "/d/h04", 41, 2), Make(4, "/d/h05", 50, 2)};
  ShardMatch m = MatchShards(before, now, 9);
  CHECK(m.slots == std::vector<uint32_t>{9, 4, 2, 10, 11});
  CHECK(m.kept == std::vector<bool>{false, true, true, false, false});
  CHECK(m.dropped == std::vector<uint32_t>{1});
  CHECK(m.replaced == std::vector<uint32_t>{3});
  CHECK(m.dropped_paths == std::vector<std::string>{"/d/h02"});
  CHECK(m.computed_paths == std::vector<std::string>{"/d/h00", "/d/h04", "/d/h05"});
}

// Intent: a cut file that grew changes every chunk's identity (the file
// size is part of it), so all its chunks are computed again and the old ones
// replaced, not dropped; a touched file (same size, new mtime) is computed again.
TEST_CASE("shard matcher: a grown chunked file and a touched file") {
  RunManifest before;
  before.shards.shards = {Make(0, "/big", 200, 1, 0, 100), Make(1, "/big", 200, 1, 100, 100), Make(2, "/t", 7, 1)};
  ShardList now;
  now.shards = {Make(0, "/big", 250, 3, 0, 100), Make(1, "/big", 250, 3, 100, 100), Make(2, "/big", 250, 3, 200, 50),
                Make(3, "/t", 7, 2)};
  ShardMatch m = MatchShards(before, now, 3);
  CHECK(m.kept == std::vector<bool>{false, false, false, false});
  CHECK(m.slots == std::vector<uint32_t>{3, 4, 5, 6});
  CHECK(m.replaced == std::vector<uint32_t>{0, 1, 2});
  CHECK(m.dropped.empty());
  CHECK(m.computed_paths == std::vector<std::string>{"/big", "/t"});
}

}  // namespace
}  // namespace fanfold
