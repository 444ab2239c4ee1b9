// MemoryPlatform: the fake the run directory's crash tests rely on. Its own
// rules (torn writes, full disk, what a restart keeps) are checked here.
#include "common/port/memory_platform.h"

#include <doctest/doctest.h>

#include <algorithm>
#include <cerrno>
#include <memory>
#include <string>

namespace fanfold {
namespace {

std::unique_ptr<WritableFile> OpenW(MemoryPlatform& fs, const std::string& path, CreateMode mode) {
  std::unique_ptr<WritableFile> f;
  REQUIRE(fs.OpenForWrite(path, mode, 0644, &f).ok());
  return f;
}

}  // namespace

// Intent: the write that crosses the crash mark keeps only the bytes before it, and nothing runs after it.
TEST_CASE("memory platform: a crash tears the write that crosses it") {
  MemoryPlatform fs;
  REQUIRE(fs.CreateDirectories("/a").ok());
  auto f = OpenW(fs, "/a/x", CreateMode::kTruncate);
  fs.CrashAfter(5);
  REQUIRE(f->Append("abc").ok());
  OsError e = f->Append("defgh");
  CHECK(e.code() == EIO);
  CHECK(fs.crashed());
  CHECK(fs.Remove("/a/x").code() == EIO);  // a dead process removes nothing
  fs.Restart(MemoryPlatform::Survival::kProcessCrash);
  CHECK(fs.FileData("/a/x") == "abcde");
}

// Intent: a power loss keeps synced bytes only, under names a directory sync recorded.
TEST_CASE("memory platform: a power loss keeps what was synced") {
  MemoryPlatform fs;
  REQUIRE(fs.CreateDirectories("/a").ok());
  auto f = OpenW(fs, "/a/x", CreateMode::kAppend);
  REQUIRE(f->Append("synced").ok());
  REQUIRE(f->Sync(SyncDepth::kData).ok());
  REQUIRE(fs.SyncDirectory("/a").ok());
  REQUIRE(f->Append("+lost").ok());
  auto g = OpenW(fs, "/a/y", CreateMode::kTruncate);
  REQUIRE(g->Append("never named durably").ok());
  REQUIRE(g->Sync(SyncDepth::kFull).ok());
  fs.Restart(MemoryPlatform::Survival::kPowerLoss);
  CHECK(fs.FileData("/a/x") == "synced");
  CHECK_FALSE(fs.HasFile("/a/y"));
}

// Intent: a full disk writes what fits and reports ENOSPC, and writing works again once space is back.
TEST_CASE("memory platform: a full disk") {
  MemoryPlatform fs;
  REQUIRE(fs.CreateDirectories("/a").ok());
  auto f = OpenW(fs, "/a/x", CreateMode::kAppend);
  fs.SetSpaceLeft(4);
  OsError e = f->Append("123456");
  CHECK(e.code() == ENOSPC);
  CHECK(std::string(e.call()) == "write");
  CHECK_FALSE(fs.crashed());
  fs.SetSpaceLeft(MemoryPlatform::kUnlimited);
  REQUIRE(f->Append("56").ok());
  CHECK(fs.FileData("/a/x") == "123456");
}

// Intent: one-shot faults hit only the matching call and path, once.
TEST_CASE("memory platform: FailNext is one-shot and path-specific") {
  MemoryPlatform fs;
  REQUIRE(fs.CreateDirectories("/a").ok());
  fs.PutFile("/a/x", "1");
  fs.PutFile("/a/y", "2");
  fs.FailNext(MemoryPlatform::Op::kRename, "/a/y", EIO);
  CHECK(fs.Rename("/a/x", "/a/z").ok());
  CHECK(fs.Rename("/a/y", "/a/w").code() == EIO);
  CHECK(fs.Rename("/a/y", "/a/w").ok());
}

// Intent: a lock is exclusive until its holder lets go, and a restart releases every lock (a dead process holds
// no flock).
TEST_CASE("memory platform: locks") {
  MemoryPlatform fs;
  REQUIRE(fs.CreateDirectories("/a").ok());
  std::unique_ptr<FileLock> first, second;
  REQUIRE(fs.LockFile("/a/lock", &first).ok());
  OsError e = fs.LockFile("/a/lock", &second);
  CHECK(std::string(e.call()) == "flock");
  first.reset();
  REQUIRE(fs.LockFile("/a/lock", &second).ok());
  fs.Restart(MemoryPlatform::Survival::kProcessCrash);
  REQUIRE(fs.LockFile("/a/lock", &first).ok());
  second.reset();  // an old lock's release does not free the new holder's
  CHECK_FALSE(fs.LockFile("/a/lock", &second).ok());
}

// Intent: directory listing names direct children only; removing a tree removes everything below it.
TEST_CASE("memory platform: listing and removing trees") {
  MemoryPlatform fs;
  REQUIRE(fs.CreateDirectories("/r/sub").ok());
  fs.PutFile("/r/a", "");
  fs.PutFile("/r/sub/b", "");
  std::vector<std::string> names;
  REQUIRE(fs.ListDirectory("/r", &names).ok());
  std::sort(names.begin(), names.end());
  CHECK(names == std::vector<std::string>{"a", "sub"});
  REQUIRE(fs.RemoveTree("/r/sub").ok());
  CHECK_FALSE(fs.Exists("/r/sub"));
  CHECK_FALSE(fs.HasFile("/r/sub/b"));
  CHECK(fs.HasFile("/r/a"));
}

}  // namespace fanfold
