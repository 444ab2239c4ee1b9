// RunDirectory on a MemoryPlatform: torn writes, a full disk and failing
// syncs at each step of a commit. What docs/run-directory.md and
// docs/crash-safety.md promise, and what these tests hold it to: a shard is
// done once Commit() returned ok for it, and survives any crash after that;
// a reopened directory offers exactly the committed shards, so only the
// others are recomputed; the error names the path and the system's reason.
#include <doctest/doctest.h>

#include <cerrno>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "common/port/memory_platform.h"
#include "coordinator/rundir/run_directory.h"

namespace fanfold {
namespace {

using Op = MemoryPlatform::Op;
using Survival = MemoryPlatform::Survival;

// errno texts as Python's os.strerror gives them on Linux (glibc):
// os.strerror(errno.EIO), os.strerror(errno.ENOSPC).
const std::string kEio = "Input/output error";
const std::string kEnospc = "No space left on device";

const std::string kDir = "/runs/r";
const std::string kPack2Tmp = kDir + "/partials/pack-000002.ffpk.tmp";
const std::string kJournal = kDir + "/journal.ndjson";
constexpr size_t kFrameBytes = 24;  // docs/run-directory.md: u32 + u32 + u64 + u64

std::string PartialOf(uint32_t shard, size_t size = 100) {
  std::string p(size, static_cast<char>('a' + shard % 26));
  p += "#" + std::to_string(shard);
  return p;
}

struct FaultFixture {
  MemoryPlatform fs;
  std::unique_ptr<RunDirectory> dir;

  FaultFixture() {
    RunManifest m;
    m.job_path = "/nowhere/job.json";
    m.format = "ndjson";
    m.fingerprint = "0123456789abcdef";
    auto d = RunDirectory::Create(kDir, m, true, fs);
    REQUIRE(d.ok());
    dir = std::move(d).value();
    // Batch 1, committed before any fault: shards 0 and 1.
    Stage({0, 1});
    REQUIRE(dir->Commit().ok());
  }

  void Stage(const std::vector<uint32_t>& shards) {
    for (uint32_t s : shards) {
      REQUIRE(dir->StagePartial(s, PartialOf(s)).ok());
      dir->StageJournal("{\"event\":\"attempt\",\"shard\":" + std::to_string(s) + "}");
    }
  }

  // Ends the process (its destructors run against the platform as it is),
  // restarts the machine and opens the directory again.
  void CrashAndReopen(Survival survival) {
    dir.reset();
    fs.Restart(survival);
    Reopen();
  }
  void Reopen() {
    dir.reset();
    RunManifest m;
    auto d = RunDirectory::Open(kDir, &m, fs);
    REQUIRE(d.ok());
    CHECK(m.fingerprint == "0123456789abcdef");
    dir = std::move(d).value();
  }

  // Shard -> partial, for every shard 0..9 with a committed partial.
  std::map<uint32_t, std::string> Committed() const {
    std::map<uint32_t, std::string> out;
    for (uint32_t s = 0; s < 10; ++s) {
      std::string bytes;
      REQUIRE(dir->LoadPartial(s, &bytes).ok());
      if (!bytes.empty()) out[s] = bytes;
    }
    CHECK(out.size() == dir->committed_count());
    return out;
  }
  // The committed shards as the partials staged for them.
  static std::map<uint32_t, std::string> Expect(const std::vector<uint32_t>& shards) {
    std::map<uint32_t, std::string> out;
    for (uint32_t s : shards) out[s] = PartialOf(s);
    return out;
  }
  bool HasTempFiles() const {
    for (const std::string& f : fs.Files())
      if (f.size() > 4 && f.compare(f.size() - 4, 4, ".tmp") == 0) return true;
    return false;
  }
  // Finishes what was not committed, as `resume` would, and checks nothing is lost.
  void RecomputeRest(const std::vector<uint32_t>& missing, const std::vector<uint32_t>& all) {
    Stage(missing);
    REQUIRE(dir->Commit().ok());
    Reopen();
    CHECK(Committed() == Expect(all));
  }
};

// Each pack entry costs its frame and its partial.
constexpr size_t kEntryBytes = kFrameBytes + 100 + 2;  // PartialOf(s) for s < 10

}  // namespace

// Intent: a crash half-way through writing a batch's pack loses that batch only; the reopened directory has the
// committed batch intact, no temporary, and the lost shards are simply computed again.
TEST_CASE("run directory faults: a torn pack write") {
  FaultFixture f;
  Survival survival = Survival::kProcessCrash;
  SUBCASE("process crash") {}
  SUBCASE("power loss") { survival = Survival::kPowerLoss; }
  f.Stage({2, 3});
  f.fs.CrashAfter(kEntryBytes + 10);  // inside the second entry
  Status s = f.dir->Commit();
  CHECK(s.message() == "cannot write '" + kPack2Tmp + "': " + kEio);
  CHECK(f.fs.HasFile(kPack2Tmp));  // the dead process removed nothing
  f.CrashAndReopen(survival);
  CHECK(f.Committed() == FaultFixture::Expect({0, 1}));
  CHECK_FALSE(f.HasTempFiles());  // docs/run-directory.md: leftover .tmp files are removed on open
  f.RecomputeRest({2, 3}, {0, 1, 2, 3});
}

// Intent: a partial of 1 MiB or more is written straight to the pack when staged; a crash during that write
// loses the open batch only.
TEST_CASE("run directory faults: a torn direct write of a large partial") {
  FaultFixture f;
  f.Stage({2});
  f.fs.CrashAfter(kEntryBytes + kFrameBytes + 1000);
  Status s = f.dir->StagePartial(3, std::string(size_t{1} << 20, 'L'));
  CHECK(s.message() == "cannot write '" + kPack2Tmp + "': " + kEio);
  f.CrashAndReopen(Survival::kProcessCrash);
  CHECK(f.Committed() == FaultFixture::Expect({0, 1}));
  CHECK_FALSE(f.HasTempFiles());
}

// Intent: a crash after the pack's rename but before the directory sync: the batch was never reported committed;
// after a process crash the renamed pack is whole and counts, after a power loss its name may be gone — either
// way the committed batch survives and the directory opens cleanly.
TEST_CASE("run directory faults: a crash between rename and directory sync") {
  FaultFixture f;
  f.Stage({2, 3});
  f.fs.FailNext(Op::kSyncDir, "/partials", MemoryPlatform::kCrash);
  CHECK_FALSE(f.dir->Commit().ok());
  SUBCASE("process crash: the renamed pack is whole") {
    f.CrashAndReopen(Survival::kProcessCrash);
    CHECK(f.Committed() == FaultFixture::Expect({0, 1, 2, 3}));
  }
  SUBCASE("power loss: the rename did not reach the disk") {
    f.CrashAndReopen(Survival::kPowerLoss);
    CHECK(f.Committed() == FaultFixture::Expect({0, 1}));
    CHECK_FALSE(f.HasTempFiles());
    f.RecomputeRest({2, 3}, {0, 1, 2, 3});
  }
}

// Intent: a crash while appending to the journal leaves the earlier lines intact and a cut last line; the pack
// committed just before it stays committed (the journal only reports commits; packs decide what is done).
TEST_CASE("run directory faults: a torn journal write") {
  FaultFixture f;
  const std::string before = f.fs.FileData(kJournal);
  REQUIRE(before == "{\"event\":\"attempt\",\"shard\":0}\n{\"event\":\"attempt\",\"shard\":1}\n");
  f.Stage({2});
  f.fs.CrashAfter(kEntryBytes + 7);  // the whole pack, then 7 bytes of the journal
  Status s = f.dir->Commit();
  CHECK(s.message() == "cannot write '" + kJournal + "': " + kEio);
  f.CrashAndReopen(Survival::kProcessCrash);
  CHECK(f.fs.FileData(kJournal) == before + "{\"event");
  CHECK(f.Committed() == FaultFixture::Expect({0, 1, 2}));
  // The next session's first event starts a line of its own: the fragment
  // stays one broken line, and the new event is whole.
  f.dir->StageJournal("{\"event\":\"start\"}");
  REQUIRE(f.dir->Commit().ok());
  CHECK(f.fs.FileData(kJournal) == before + "{\"event\n{\"event\":\"start\"}\n");
  // Only the first append of a session looks: the next goes straight on.
  f.dir->StageJournal("{\"event\":\"finish\"}");
  REQUIRE(f.dir->Commit().ok());
  CHECK(f.fs.FileData(kJournal) == before + "{\"event\n{\"event\":\"start\"}\n{\"event\":\"finish\"}\n");
}

// Intent: the journal created by a run's first commit survives a power loss
// right after it (its name is made durable by syncing the run directory),
// and a journal that ends in a whole line gets no blank line on the next append.
TEST_CASE("run directory faults: the journal's name survives a power loss") {
  FaultFixture f;
  const std::string before = f.fs.FileData(kJournal);
  f.CrashAndReopen(Survival::kPowerLoss);
  CHECK(f.fs.FileData(kJournal) == before);
  f.dir->StageJournal("{\"event\":\"start\"}");
  REQUIRE(f.dir->Commit().ok());
  CHECK(f.fs.FileData(kJournal) == before + "{\"event\":\"start\"}\n");
}

// Intent: a full disk during a commit fails it with the path and ENOSPC's text, leaves no temporary, keeps every
// committed shard, and the run finishes once there is space (docs/crash-safety.md).
TEST_CASE("run directory faults: a full disk during commit") {
  FaultFixture f;
  const std::string journal_before = f.fs.FileData(kJournal);
  f.Stage({2, 3});
  SUBCASE("while writing the pack") {
    f.fs.SetSpaceLeft(kEntryBytes / 2);
    Status s = f.dir->Commit();
    CHECK(s.code() == Status::Code::kIoError);
    CHECK(s.message() == "cannot write '" + kPack2Tmp + "': " + kEnospc);
    CHECK_FALSE(f.HasTempFiles());
    CHECK(f.fs.FileData(kJournal) == journal_before);  // the journal never says more than the packs hold
    CHECK(f.dir->committed_count() == 2);
    f.fs.SetSpaceLeft(MemoryPlatform::kUnlimited);
    f.Reopen();
    CHECK(f.Committed() == FaultFixture::Expect({0, 1}));
    f.RecomputeRest({2, 3}, {0, 1, 2, 3});
  }
  SUBCASE("while appending to the journal") {
    f.fs.SetSpaceLeft(2 * kEntryBytes + 5);
    Status s = f.dir->Commit();
    CHECK(s.message() == "cannot write '" + kJournal + "': " + kEnospc);
    CHECK(f.dir->committed_count() == 4);  // the pack was committed first
    f.fs.SetSpaceLeft(MemoryPlatform::kUnlimited);
    f.Reopen();
    CHECK(f.Committed() == FaultFixture::Expect({0, 1, 2, 3}));
  }
}

// Intent: a failing fsync at each step of a commit is reported with its path; a batch whose pack or directory sync
// failed is not counted as committed, and nothing committed before is lost, even by a power loss afterwards.
TEST_CASE("run directory faults: failing fsync and rename") {
  FaultFixture f;
  f.Stage({2, 3});
  std::vector<uint32_t> durable = {0, 1};
  std::string want;
  SUBCASE("the pack's fdatasync") {
    f.fs.FailNext(Op::kSync, "pack-000002", EIO);
    want = "cannot fsync '" + kPack2Tmp + "': " + kEio;
  }
  SUBCASE("the rename") {
    f.fs.FailNext(Op::kRename, "pack-000002", EIO);
    want = "cannot rename into '" + kDir + "/partials/pack-000002.ffpk': " + kEio;
  }
  SUBCASE("the directory's fsync") {
    f.fs.FailNext(Op::kSyncDir, "/partials", EIO);
    want = "cannot fsync '" + kDir + "/partials': " + kEio;
  }
  SUBCASE("the journal's fdatasync") {
    f.fs.FailNext(Op::kSync, "journal", EIO);
    want = "cannot fsync '" + kJournal + "': " + kEio;
    durable = {0, 1, 2, 3};  // its pack was committed before the journal
  }
  Status s = f.dir->Commit();
  CHECK(s.message() == want);
  CHECK(f.dir->committed_count() == durable.size());
  CHECK_FALSE(f.HasTempFiles());
  f.CrashAndReopen(Survival::kPowerLoss);
  CHECK(f.Committed() == FaultFixture::Expect(durable));
}

// Intent: a commit is due after 256 staged partials or 200 ms after the first staged item
// (docs/run-directory.md), timed by the platform's monotonic clock.
TEST_CASE("run directory faults: commit timing follows the platform clock") {
  FaultFixture f;
  CHECK_FALSE(f.dir->commit_due());  // nothing staged
  f.dir->StageJournal("{\"event\":\"x\"}");
  f.fs.AdvanceClock(199'999'999);
  CHECK_FALSE(f.dir->commit_due());
  f.fs.AdvanceClock(1);
  CHECK(f.dir->commit_due());
  REQUIRE(f.dir->Commit().ok());
  for (uint32_t s = 0; s < 255; ++s) REQUIRE(f.dir->StagePartial(s, "p").ok());
  CHECK_FALSE(f.dir->commit_due());
  REQUIRE(f.dir->StagePartial(255, "p").ok());
  CHECK(f.dir->commit_due());
}

// Intent: a second coordinator is refused while the first holds the lock, and a dead one's lock does not linger.
TEST_CASE("run directory faults: the lock") {
  FaultFixture f;
  RunManifest m;
  auto second = RunDirectory::Open(kDir, &m, f.fs);
  REQUIRE_FALSE(second.ok());
  CHECK(second.status().message() == "run directory '" + kDir + "' is in use by another fanfold process");
  f.CrashAndReopen(Survival::kProcessCrash);
  CHECK(f.Committed() == FaultFixture::Expect({0, 1}));
}

}  // namespace fanfold
