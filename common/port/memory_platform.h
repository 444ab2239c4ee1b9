// MemoryPlatform: a Platform whose files live in memory, with a fake clock
// and faults on command — a failing call, a full disk, a process crash after
// N more bytes (a torn write), and a restart that keeps either everything
// written (a killed process) or only what was synced (a power loss). Tests
// use it to check what survives; production never does. Thread-safe (one
// mutex). REQUIRES: outlives every file and lock it handed out.
#pragma once

#include <cstdint>
#include <limits>
#include <map>
#include <memory>
#include <mutex>
#include <set>
#include <string>
#include <vector>

#include "common/port/platform.h"

namespace fanfold {

class MemoryPlatform final : public Platform {
 public:
  // The calls a fault can be attached to.
  enum class Op { kOpen, kRead, kWrite, kSync, kRename, kRemove, kSyncDir, kLock };
  // What a Restart keeps: kProcessCrash keeps every byte written (the kernel
  // had it); kPowerLoss keeps only synced bytes, under the names the last
  // directory sync of their directory saw.
  enum class Survival { kProcessCrash, kPowerLoss };
  static constexpr uint64_t kUnlimited = std::numeric_limits<uint64_t>::max();

  MemoryPlatform();
  ~MemoryPlatform() override;

  // As FailNext's err: the process "dies" at that call instead (EIO, then
  // every later call fails too), as a kill between two system calls would.
  static constexpr int kCrash = -1;

  // The next `op` on a path containing path_part fails with err (once each call).
  void FailNext(Op op, std::string path_part, int err);
  // After `bytes` more bytes, writes stop short with ENOSPC (kUnlimited: never).
  void SetSpaceLeft(uint64_t bytes);
  // After `bytes` more bytes the process "dies": the write crossing the mark
  // keeps only the bytes before it, and every later call fails with EIO.
  void CrashAfter(uint64_t bytes);
  bool crashed() const;
  // Starts over after a crash (or at any moment, as if killed there):
  // clears faults, space limits and locks; keeps what `survival` says.
  void Restart(Survival survival);

  // Direct access for tests, outside any fault. PutFile's file is durable.
  void PutFile(const std::string& path, const std::string& data);
  bool HasFile(const std::string& path) const;
  std::string FileData(const std::string& path) const;  // "" if missing
  // Every file path, sorted.
  std::vector<std::string> Files() const;
  void AdvanceClock(uint64_t ns);

  OsError ReadFile(const std::string& path, std::string* out) override;
  OsError OpenForRead(const std::string& path, std::unique_ptr<ReadableFile>* out) override;
  OsError OpenForWrite(const std::string& path, CreateMode mode, unsigned permissions,
                       std::unique_ptr<WritableFile>* out) override;
  OsError Rename(const std::string& from, const std::string& to) override;
  OsError Remove(const std::string& path) override;
  OsError RemoveTree(const std::string& path) override;
  OsError CreateDirectories(const std::string& path) override;
  OsError SyncDirectory(const std::string& dir) override;
  OsError ListDirectory(const std::string& dir, std::vector<std::string>* names) override;
  bool Exists(const std::string& path) override;
  OsError Identify(const std::string& path, FileIdentity* out) override;
  OsError LockFile(const std::string& path, std::unique_ptr<FileLock>* out) override;
  uint64_t WallNanos() override;
  uint64_t MonotonicNanos() override;
  int CurrentPid() override { return 4242; }

 private:
  struct Node {
    std::string data;
    uint64_t synced = 0;  // bytes that survive a power loss
    int64_t mtime_ns = 0;
  };
  struct Fault {
    Op op;
    std::string path_part;
    int err;
  };
  class File;
  class Reader;
  class Lock;

  // The error a call `op` on path meets now (0: none); consumes a one-shot fault.
  int TakeFault(Op op, const std::string& path);  // REQUIRES: mu_ held
  // Appends data to node under the space and crash budgets.
  OsError AppendTo(Node& node, std::string_view data);
  OsError SyncNode(Node& node);
  void Unlock(const std::string& path, uint64_t generation);
  bool IsDir(const std::string& path) const;  // REQUIRES: mu_ held

  mutable std::mutex mu_;
  std::map<std::string, std::shared_ptr<Node>> files_;    // the live namespace
  std::map<std::string, std::shared_ptr<Node>> durable_;  // as the last directory syncs left it
  std::set<std::string> dirs_;                            // directories always survive
  std::set<std::string> locked_;
  std::vector<Fault> faults_;
  uint64_t space_left_ = kUnlimited;
  uint64_t crash_after_ = kUnlimited;
  bool crashed_ = false;
  uint64_t generation_ = 0;  // bumped by Restart: older locks release nothing
  uint64_t wall_ns_ = 1'800'000'000'000'000'000;
  uint64_t mono_ns_ = 1'000'000'000;
};

}  // namespace fanfold
