// ShmSegment: one POSIX shared-memory object mapped into this process.
// Create() (the coordinator) makes a fresh owner-only (0600) segment named
// "fanfold-<pid>-<16 hex digits>", registers its name for signal-time cleanup
// and removes it in the destructor; Open() (a worker) maps an existing one and
// never removes it. One owner thread; the mapped bytes are shared memory
// whose rules are in common/transport/shm_layout.h.
#pragma once

#include <boost/interprocess/mapped_region.hpp>
#include <boost/interprocess/shared_memory_object.hpp>
#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "common/base/status.h"

namespace fanfold {

class ShmSegment {
 public:
  // Creates and maps a zero-filled segment of `size` bytes. Fails with a
  // clear message when the shared-memory file system has less room.
  static Result<std::unique_ptr<ShmSegment>> Create(uint64_t size);
  // Maps the existing segment `name` read-write.
  static Result<std::unique_ptr<ShmSegment>> Open(const std::string& name);

  ShmSegment(const ShmSegment&) = delete;
  ShmSegment& operator=(const ShmSegment&) = delete;
  // Unmaps; an owner (Create) also removes the name.
  ~ShmSegment();

  const std::string& name() const { return name_; }
  void* data() const { return region_.get_address(); }
  size_t size() const { return region_.get_size(); }

  // Removes every "fanfold-<pid>-*" segment whose pid no longer exists.
  // Returns how many were removed; their names go to *removed if given.
  static int RemoveStaleSegments(std::vector<std::string>* removed = nullptr);
  // Where the segment `name` shows up in the file system ("/dev/shm/<name>").
  static std::string FilePath(const std::string& name);
  // Names of existing fanfold segments created by process `pid`.
  static std::vector<std::string> ListSegmentsOf(int pid);

 private:
  ShmSegment(std::string name, bool owner, boost::interprocess::shared_memory_object shm,
             boost::interprocess::mapped_region region);

  std::string name_;
  bool owner_;
  int registry_slot_ = -1;
  boost::interprocess::shared_memory_object shm_;
  boost::interprocess::mapped_region region_;
};

// Unlinks every segment this process currently owns. Async-signal-safe (it
// only calls shm_unlink), for a signal handler about to _exit.
void UnlinkOwnedSegments() noexcept;

}  // namespace fanfold
