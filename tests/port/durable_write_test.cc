// DurableWrite: one routine, three policies; each step's failure leaves the
// old target and no temporary, and says which step failed in the policy's words.
#include "common/port/files/durable_write.h"
#include "common/port/process_control.h"

#include <doctest/doctest.h>

#include <cerrno>
#include <string>

#include "common/port/memory_platform.h"

namespace fanfold {
namespace {

// The texts of errno values as Python's os.strerror gives them on Linux
// (glibc): os.strerror(errno.EIO), os.strerror(errno.ENOSPC).
constexpr const char* kEioText = "Input/output error";
constexpr const char* kEnospcText = "No space left on device";

DurableWritePolicy SuffixPolicy() {
  DurableWritePolicy p;
  p.temp_name = DurableWritePolicy::TempName::kSuffix;
  p.sync = SyncDepth::kData;
  p.dir_sync = DurableWritePolicy::DirSync::kRequired;
  return p;
}

struct Disk {
  MemoryPlatform fs;
  Disk() {
    REQUIRE(fs.CreateDirectories("/d").ok());
    fs.PutFile("/d/t", "old");
  }
  // True iff only the target is left in /d (no temporary).
  bool OnlyTarget() const {
    auto files = fs.Files();
    return files.size() == 1 && files[0] == "/d/t";
  }
};

}  // namespace

// Intent: a successful write replaces the target and leaves no temporary behind, for either naming policy.
TEST_CASE("durable write: replaces the target") {
  Disk d;
  DurableWritePolicy p;
  SUBCASE("unique temporary") {}
  SUBCASE("suffix temporary") { p = SuffixPolicy(); }
  REQUIRE(WriteFileDurably(d.fs, "/d/t", "new", p).ok());
  CHECK(d.fs.FileData("/d/t") == "new");
  CHECK(d.OnlyTarget());
}

// Intent: each failing step reports its own verb and path, removes the temporary and keeps the old target.
TEST_CASE("durable write: a failing step keeps the old file") {
  Disk d;
  const DurableWritePolicy p = SuffixPolicy();
  std::string want;
  SUBCASE("create") {
    d.fs.FailNext(MemoryPlatform::Op::kOpen, "t.tmp", EIO);
    want = std::string("cannot create '/d/t.tmp': ") + kEioText;
  }
  SUBCASE("write: the disk is full") {
    d.fs.SetSpaceLeft(2);
    want = std::string("cannot write '/d/t.tmp': ") + kEnospcText;
  }
  SUBCASE("sync") {
    d.fs.FailNext(MemoryPlatform::Op::kSync, "t.tmp", EIO);
    want = std::string("cannot fsync '/d/t.tmp': ") + kEioText;
  }
  SUBCASE("rename") {
    d.fs.FailNext(MemoryPlatform::Op::kRename, "t.tmp", EIO);
    want = std::string("cannot rename into '/d/t': ") + kEioText;
  }
  Status s = WriteFileDurably(d.fs, "/d/t", "new bytes", p);
  CHECK(s.code() == Status::Code::kIoError);
  CHECK(s.message() == want);
  CHECK(d.fs.FileData("/d/t") == "old");
  CHECK(d.OnlyTarget());
}

// Intent: the directory sync follows the policy: required reports it (naming the failed call), best effort does
// not, and EINVAL (a directory that cannot be synced at all) is never an error.
TEST_CASE("durable write: directory sync policy") {
  Disk d;
  DurableWritePolicy p = SuffixPolicy();
  SUBCASE("required") {
    d.fs.FailNext(MemoryPlatform::Op::kSyncDir, "/d", EIO);
    Status s = WriteFileDurably(d.fs, "/d/t", "new", p);
    CHECK(s.message() == std::string("cannot fsync '/d': ") + kEioText);
  }
  SUBCASE("required, EINVAL") {
    d.fs.FailNext(MemoryPlatform::Op::kSyncDir, "/d", EINVAL);
    CHECK(WriteFileDurably(d.fs, "/d/t", "new", p).ok());
  }
  SUBCASE("best effort") {
    p.dir_sync = DurableWritePolicy::DirSync::kBestEffort;
    d.fs.FailNext(MemoryPlatform::Op::kSyncDir, "/d", EIO);
    CHECK(WriteFileDurably(d.fs, "/d/t", "new", p).ok());
  }
  CHECK(d.fs.FileData("/d/t") == "new");  // renamed in every case: only its durability is in doubt
}

// Intent: after a power loss a write that returned ok survives; one whose directory was not synced may not.
TEST_CASE("durable write: what a power loss keeps") {
  Disk d;
  DurableWritePolicy p = SuffixPolicy();
  SUBCASE("synced directory") {
    REQUIRE(WriteFileDurably(d.fs, "/d/t", "new", p).ok());
    d.fs.Restart(MemoryPlatform::Survival::kPowerLoss);
    CHECK(d.fs.FileData("/d/t") == "new");
    CHECK(d.OnlyTarget());
  }
  SUBCASE("no directory sync") {
    p.dir_sync = DurableWritePolicy::DirSync::kNone;
    REQUIRE(WriteFileDurably(d.fs, "/d/t", "new", p).ok());
    d.fs.Restart(MemoryPlatform::Survival::kPowerLoss);
    CHECK(d.fs.FileData("/d/t") == "old");
  }
}

// Intent: a unique temporary is created exclusively and named after the target and the process, so two writers
// never share one; an abandoned StagedFile removes its temporary.
TEST_CASE("durable write: staged file naming and abandonment") {
  Disk d;
  DurableWritePolicy p;
  {
    auto staged = StagedFile::Begin(d.fs, "/d/t", p);
    REQUIRE(staged.ok());
    // MemoryPlatform's pid is 4242; the host is this machine's.
    CHECK((*staged)->temp_path().rfind("/d/.t.tmp-4242@" + HostTagForFiles() + "-", 0) == 0);
    REQUIRE((*staged)->Append("partial").ok());
    CHECK(d.fs.Files().size() == 2);
  }
  CHECK(d.OnlyTarget());
  CHECK(d.fs.FileData("/d/t") == "old");
}

}  // namespace fanfold
