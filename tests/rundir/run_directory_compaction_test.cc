// RunDirectory::Compact on a MemoryPlatform: which packs it deletes, which it
// rewrites, and that a crash at any of its steps (a torn copy, a failed or
// fatal sync, rename, remove or directory sync; after a process crash or a
// power loss) leaves a directory whose every live shard still reads back its
// own partial, and that a second compaction finishes the job.
#include <algorithm>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include <doctest/doctest.h>

#include "common/port/memory_platform.h"
#include "coordinator/rundir/run_directory.h"

namespace fanfold {
namespace {

using Op = MemoryPlatform::Op;
using Survival = MemoryPlatform::Survival;

const std::string kDir = "/runs/c";

std::string PartialOfSlot(uint32_t slot) {
  return std::string(200, static_cast<char>('a' + slot)) + "#" + std::to_string(slot);
}

RunManifest ManifestWithSlots(const std::vector<uint32_t>& slots) {
  RunManifest m;
  m.job_path = "/nowhere/job.json";
  m.format = "ndjson";
  m.fingerprint = "0123456789abcdef";
  m.shards.shards.resize(slots.size());
  for (uint32_t i = 0; i < slots.size(); ++i) m.shards.shards[i].index = i;
  m.slots = slots;
  return m;
}

// Packs 1 (slots 0, 1, 2), 2 (3, 4) and 3 (5, 6); then a refresh keeps
// slots 5, 0 and 6 only: pack 1 is one third live (rewritten), pack 2 dead
// (deleted), pack 3 all live (kept).
struct CompactFixture {
  MemoryPlatform fs;
  std::unique_ptr<RunDirectory> dir;
  const std::vector<uint32_t> live = {5, 0, 6};

  CompactFixture() {
    auto d = RunDirectory::Create(kDir, ManifestWithSlots({0, 1, 2, 3, 4, 5, 6}), true, fs);
    REQUIRE(d.ok());
    dir = std::move(d).value();
    for (const std::vector<uint32_t>& batch : {std::vector<uint32_t>{0, 1, 2}, {3, 4}, {5, 6}}) {
      for (uint32_t s : batch) REQUIRE(dir->StagePartial(s, PartialOfSlot(s)).ok());
      REQUIRE(dir->Commit().ok());
    }
    REQUIRE(dir->RewriteManifest(ManifestWithSlots(live)).ok());
  }
  void Reopen() {
    dir.reset();
    RunManifest m;
    auto d = RunDirectory::Open(kDir, &m, fs);
    REQUIRE(d.ok());
    dir = std::move(d).value();
  }
  // Every live shard reads back the partial of its slot.
  void CheckLive() {
    for (uint32_t i = 0; i < live.size(); ++i) {
      std::string bytes;
      REQUIRE(dir->LoadPartial(i, &bytes).ok());
      CHECK(bytes == PartialOfSlot(live[i]));
    }
  }
  std::vector<std::string> Packs() const {
    std::vector<std::string> out;
    for (const std::string& f : fs.Files())
      if (f.find("/partials/") != std::string::npos) out.push_back(f.substr(f.rfind('/') + 1));
    return out;
  }
};

}  // namespace

// Intent: a dead pack is deleted, a mostly dead one rewritten into a new pack,
// a live one left alone; the live partials read back before and after a reopen.
TEST_CASE("run directory compaction: deletes, rewrites and keeps") {
  CompactFixture f;
  Result<RunDirectory::Compaction> c = f.dir->Compact();
  REQUIRE(c.ok());
  CHECK(c->packs_removed == 2);
  CHECK(c->packs_rewritten == 1);
  CHECK(c->partials_copied == 1);
  CHECK(c->bytes_freed > 0);
  CHECK(f.Packs() == std::vector<std::string>{"pack-000003.ffpk", "pack-000004.ffpk"});
  f.CheckLive();
  CHECK(f.dir->committed_count() == 3);
  f.Reopen();
  f.CheckLive();
  CHECK(f.dir->committed_count() == 3);
  // Nothing left to collect: a second compaction changes nothing.
  Result<RunDirectory::Compaction> again = f.dir->Compact();
  REQUIRE(again.ok());
  CHECK(again->packs_removed == 0);
  CHECK(f.Packs() == std::vector<std::string>{"pack-000003.ffpk", "pack-000004.ffpk"});
}

// Intent: a crash at each step of a compaction, after a process crash or a
// power loss, leaves every live partial readable; compacting again then
// leaves the same packs as an uninterrupted compaction.
TEST_CASE("run directory compaction: a crash at any step") {
  struct Fault {
    const char* what;
    Op op;
    const char* path;
    uint64_t crash_after;  // bytes, when op is kWrite
  };
  const Fault faults[] = {
      {"torn copy", Op::kWrite, "", 100},
      {"sync of the copy", Op::kSync, "pack-000004", 0},
      {"rename of the copy", Op::kRename, "pack-000004", 0},
      {"directory sync after the copy", Op::kSyncDir, "/partials", 0},
      {"first delete", Op::kRemove, "pack-000001", 0},
      {"second delete", Op::kRemove, "pack-000002", 0},
  };
  for (const Fault& fault : faults) {
    for (Survival survival : {Survival::kProcessCrash, Survival::kPowerLoss}) {
      CAPTURE(fault.what);
      CAPTURE(survival == Survival::kPowerLoss);
      CompactFixture f;
      if (fault.op == Op::kWrite)
        f.fs.CrashAfter(fault.crash_after);
      else
        f.fs.FailNext(fault.op, fault.path, MemoryPlatform::kCrash);
      CHECK_FALSE(f.dir->Compact().ok());
      f.dir.reset();
      f.fs.Restart(survival);
      f.Reopen();
      f.CheckLive();
      Result<RunDirectory::Compaction> again = f.dir->Compact();
      REQUIRE(again.ok());
      f.CheckLive();
      f.Reopen();
      f.CheckLive();
      std::vector<std::string> packs = f.Packs();
      CHECK(std::find(packs.begin(), packs.end(), "pack-000001.ffpk") == packs.end());
      CHECK(std::find(packs.begin(), packs.end(), "pack-000002.ffpk") == packs.end());
      CHECK(std::find(packs.begin(), packs.end(), "pack-000003.ffpk") != packs.end());
      CHECK(packs.size() == 2);
    }
  }
}

}  // namespace fanfold
