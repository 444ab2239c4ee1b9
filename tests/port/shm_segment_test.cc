// ShmSegment: naming, permissions, owner removal, worker open, stale cleanup.
#include "common/port/shm_segment.h"

#include <doctest/doctest.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cstring>
#include <filesystem>

#include "common/port/process_control.h"

namespace fanfold {
namespace {

// Intent: a created segment is named for our pid, owner-only, zeroed, shared with an Open()ed
// mapping, and removed only by its owner's destructor.
TEST_CASE("ShmSegment create, open, share and remove") {
  std::string name;
  {
    auto seg = ShmSegment::Create(1 << 16);
    REQUIRE_MESSAGE(seg.ok(), seg.status().message());
    name = (*seg)->name();
    CHECK(name.rfind("fanfold-" + std::to_string(CurrentPid()) + "-", 0) == 0);
    CHECK(name.size() == std::string("fanfold-").size() + std::to_string(CurrentPid()).size() + 17);
    struct stat st;
    REQUIRE(::stat(ShmSegment::FilePath(name).c_str(), &st) == 0);
    CHECK((st.st_mode & 0777) == 0600);
    CHECK((*seg)->size() == (1 << 16));
    CHECK(static_cast<const char*>((*seg)->data())[12345] == 0);
    {
      auto other = ShmSegment::Open(name);
      REQUIRE(other.ok());
      std::memcpy((*other)->data(), "shared", 6);
    }  // a non-owner leaves the name alone
    CHECK(std::filesystem::exists(ShmSegment::FilePath(name)));
    CHECK(std::memcmp((*seg)->data(), "shared", 6) == 0);
    auto names = ShmSegment::ListSegmentsOf(CurrentPid());
    CHECK(std::find(names.begin(), names.end(), name) != names.end());
  }
  CHECK_FALSE(std::filesystem::exists(ShmSegment::FilePath(name)));
  CHECK_FALSE(ShmSegment::Open(name).ok());
}

// Intent: Open refuses names that are not fanfold segments, so a worker cannot be pointed at
// an arbitrary shared-memory object.
TEST_CASE("ShmSegment::Open rejects foreign names") {
  CHECK(ShmSegment::Open("other-123-0123456789abcdef").status().code() ==
        Status::Code::kInvalidArgument);
  CHECK(ShmSegment::Open("fanfold-12x-0123456789abcdef").status().code() ==
        Status::Code::kInvalidArgument);
  CHECK(ShmSegment::Open("fanfold-123-0123").status().code() == Status::Code::kInvalidArgument);
}

// Intent: a segment too big for the shared-memory file system fails cleanly with advice.
TEST_CASE("ShmSegment::Create refuses a segment larger than the free space") {
  auto seg = ShmSegment::Create(uint64_t{1} << 50);
  REQUIRE_FALSE(seg.ok());
  CHECK(seg.status().message().find("free") != std::string::npos);
  CHECK(ShmSegment::ListSegmentsOf(CurrentPid()).empty());
}

// Intent: the signal-time cleanup unlinks what this process owns.
TEST_CASE("UnlinkOwnedSegments unlinks owned segments") {
  auto seg = ShmSegment::Create(4096);
  REQUIRE(seg.ok());
  const std::string path = ShmSegment::FilePath((*seg)->name());
  REQUIRE(std::filesystem::exists(path));
  UnlinkOwnedSegments();
  CHECK_FALSE(std::filesystem::exists(path));
}

}  // namespace
}  // namespace fanfold
