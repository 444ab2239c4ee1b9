#include "common/port/shm_segment.h"

#include <dirent.h>
#include <sys/mman.h>
#include <sys/statvfs.h>

#include <atomic>
#include <cctype>
#include <boost/interprocess/permissions.hpp>
#include <cstdio>
#include <cstring>
#include <random>

#include "common/port/process_control.h"

namespace fanfold {
namespace bip = boost::interprocess;

namespace {

// Where glibc's shm_open keeps its objects.
constexpr const char* kShmDir = "/dev/shm";
constexpr const char* kPrefix = "fanfold-";
constexpr size_t kRandomHexDigits = 16;

// ---- the process-wide registry read by the signal handler ----
// Fixed slots, no allocation, so the handler can walk it at any instant: a
// slot's name is only read while its state says kFull (published with a
// release store after the name was written).
constexpr int kRegistrySlots = 16;
constexpr size_t kRegistryNameBytes = 64;
enum : int { kEmpty = 0, kFilling = 1, kFull = 2 };
struct RegistrySlot {
  std::atomic<int> state{kEmpty};
  char name[kRegistryNameBytes];  // with the leading '/', NUL-terminated
};
RegistrySlot g_registry[kRegistrySlots];

int RegisterName(const std::string& name) {
  if (name.size() + 2 > kRegistryNameBytes) return -1;
  for (int i = 0; i < kRegistrySlots; ++i) {
    int expected = kEmpty;
    if (!g_registry[i].state.compare_exchange_strong(expected, kFilling)) continue;
    g_registry[i].name[0] = '/';
    std::memcpy(g_registry[i].name + 1, name.c_str(), name.size() + 1);
    g_registry[i].state.store(kFull, std::memory_order_release);
    return i;
  }
  return -1;  // full: the segment still goes on normal exit paths
}

void UnregisterSlot(int slot) {
  if (slot >= 0) g_registry[slot].state.store(kEmpty, std::memory_order_release);
}

std::string RandomHex() {
  std::random_device rd;
  uint64_t v = (uint64_t{rd()} << 32) ^ rd();
  char buf[kRandomHexDigits + 1];
  std::snprintf(buf, sizeof buf, "%016llx", static_cast<unsigned long long>(v));
  return buf;
}

// Parses "fanfold-<pid>-<16 hex>"; returns the pid or -1.
int PidOfSegmentName(const char* name) {
  size_t plen = std::strlen(kPrefix);
  if (std::strncmp(name, kPrefix, plen) != 0) return -1;
  const char* p = name + plen;
  long pid = 0;
  int digits = 0;
  while (*p >= '0' && *p <= '9' && digits < 10) pid = pid * 10 + (*p++ - '0'), ++digits;
  if (digits == 0 || *p++ != '-' || pid <= 0 || pid > 0x7fffffff) return -1;
  size_t hex = 0;
  while (std::isxdigit(static_cast<unsigned char>(p[hex]))) ++hex;
  if (hex != kRandomHexDigits || p[hex] != '\0') return -1;
  return static_cast<int>(pid);
}

template <typename F>
void ForEachSegment(F&& f) {
  DIR* dir = ::opendir(kShmDir);
  if (!dir) return;
  while (dirent* e = ::readdir(dir)) {
    int pid = PidOfSegmentName(e->d_name);
    if (pid > 0) f(std::string(e->d_name), pid);
  }
  ::closedir(dir);
}

}  // namespace

ShmSegment::ShmSegment(std::string name, bool owner, bip::shared_memory_object shm,
                       bip::mapped_region region)
    : name_(std::move(name)), owner_(owner), shm_(std::move(shm)), region_(std::move(region)) {
  if (owner_) registry_slot_ = RegisterName(name_);
}

ShmSegment::~ShmSegment() {
  if (owner_) {
    UnregisterSlot(registry_slot_);
    bip::shared_memory_object::remove(name_.c_str());
  }
}

Result<std::unique_ptr<ShmSegment>> ShmSegment::Create(uint64_t size) {
  struct statvfs fs;
  if (::statvfs(kShmDir, &fs) == 0) {
    uint64_t avail = uint64_t{fs.f_bavail} * fs.f_frsize;
    if (avail < size) {
      return Status::IoError("shared memory: the segment needs " + std::to_string(size >> 20) +
                             " MiB but " + kShmDir + " has " + std::to_string(avail >> 20) +
                             " MiB free; use fewer workers or smaller result areas");
    }
  }
  const std::string base = std::string(kPrefix) + std::to_string(CurrentPid()) + "-";
  for (int attempt = 0; attempt < 8; ++attempt) {
    std::string name = base + RandomHex();
    try {
      bip::permissions owner_only(0600);
      bip::shared_memory_object shm(bip::create_only, name.c_str(), bip::read_write, owner_only);
      try {
        shm.truncate(static_cast<bip::offset_t>(size));
        bip::mapped_region region(shm, bip::read_write);
        return std::unique_ptr<ShmSegment>(
            new ShmSegment(name, /*owner=*/true, std::move(shm), std::move(region)));
      } catch (const bip::interprocess_exception& e) {
        bip::shared_memory_object::remove(name.c_str());
        return Status::IoError("shared memory segment '" + name + "': " + e.what());
      }
    } catch (const bip::interprocess_exception& e) {
      if (e.get_error_code() == bip::already_exists_error) continue;  // a name clash: roll again
      return Status::IoError("cannot create shared memory segment '" + name + "': " + e.what());
    }
  }
  return Status::IoError("cannot find a free shared memory segment name");
}

Result<std::unique_ptr<ShmSegment>> ShmSegment::Open(const std::string& name) {
  if (PidOfSegmentName(name.c_str()) < 0) {
    return Status::InvalidArgument("'" + name + "' is not a fanfold segment name");
  }
  try {
    bip::shared_memory_object shm(bip::open_only, name.c_str(), bip::read_write);
    bip::mapped_region region(shm, bip::read_write);
    return std::unique_ptr<ShmSegment>(
        new ShmSegment(name, /*owner=*/false, std::move(shm), std::move(region)));
  } catch (const bip::interprocess_exception& e) {
    return Status::IoError("cannot open shared memory segment '" + name + "': " + e.what());
  }
}

int ShmSegment::RemoveStaleSegments(std::vector<std::string>* removed) {
  int count = 0;
  const int self = CurrentPid();
  ForEachSegment([&](const std::string& name, int pid) {
    // Only a pid the kernel says is gone; EPERM (another user's live
    // process) and pid reuse both keep the segment: leaking beats breaking
    // a running job.
    if (pid == self || ProcessAlive(pid)) return;
    if (bip::shared_memory_object::remove(name.c_str())) {
      ++count;
      if (removed) removed->push_back(name);
    }
  });
  return count;
}

std::string ShmSegment::FilePath(const std::string& name) { return std::string(kShmDir) + "/" + name; }

std::vector<std::string> ShmSegment::ListSegmentsOf(int pid) {
  std::vector<std::string> names;
  ForEachSegment([&](const std::string& name, int p) {
    if (p == pid) names.push_back(name);
  });
  return names;
}

void UnlinkOwnedSegments() noexcept {
  for (RegistrySlot& slot : g_registry) {
    if (slot.state.load(std::memory_order_acquire) == kFull) ::shm_unlink(slot.name);
  }
}

}  // namespace fanfold
