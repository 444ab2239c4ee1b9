// The POSIX Platform against the real file system: file identity, locks and
// error texts, each checked against a source outside fanfold.
#include "common/port/platform.h"

#include <doctest/doctest.h>
#include <stdlib.h>

#include <cerrno>
#include <chrono>
#include <filesystem>
#include <fstream>

#include "common/port/clock.h"
#include "common/port/files/file_util.h"

namespace fanfold {
namespace {

namespace fs = std::filesystem;

struct TempDir {
  std::string path;
  TempDir() {
    path = (fs::temp_directory_path() / "fanfold-port-XXXXXX").string();
    REQUIRE(::mkdtemp(path.data()) != nullptr);
  }
  ~TempDir() { fs::remove_all(path); }
};

}  // namespace

// Intent: IdentifyFile gives the size and the mtime in ns that std::filesystem (libstdc++) sets and reports.
TEST_CASE("posix platform: file identity") {
  TempDir d;
  const std::string p = d.path + "/f";
  { std::ofstream(p) << "12345"; }
  // 2026-01-01T00:00:00Z is 1767225600 s after the epoch: Python's
  // datetime(2026, 1, 1, tzinfo=timezone.utc).timestamp().
  const auto when = std::chrono::sys_seconds(std::chrono::seconds(1767225600)) + std::chrono::nanoseconds(123456789);
  fs::last_write_time(p, std::chrono::file_clock::from_sys(when));
  FileIdentity id;
  REQUIRE(Platform::Posix().Identify(p, &id).ok());
  CHECK(id.size == fs::file_size(p));
  CHECK(id.mtime_ns == 1767225600'123456789LL);
  OsError e = IdentifyFile(d.path + "/missing", &id);
  CHECK(e.code() == ENOENT);
}

// Intent: a second lock on the same file fails with the flock call named, and is free again once released.
TEST_CASE("posix platform: flock is exclusive") {
  TempDir d;
  std::unique_ptr<FileLock> a, b;
  REQUIRE(Platform::Posix().LockFile(d.path + "/lock", &a).ok());
  OsError e = Platform::Posix().LockFile(d.path + "/lock", &b);
  CHECK(std::string(e.call()) == "flock");
  CHECK(e.code() == EWOULDBLOCK);
  a.reset();
  CHECK(Platform::Posix().LockFile(d.path + "/lock", &b).ok());
}

// Intent: error messages keep their wording: the path and the system's text (Python's os.strerror(errno.ENOENT)
// is "No such file or directory" and os.strerror(errno.ENOTDIR) "Not a directory" on Linux).
TEST_CASE("posix platform: error wording") {
  TempDir d;
  std::string out;
  Status s = ReadWholeFile(d.path + "/missing", &out);
  CHECK(s.message() == "cannot open '" + d.path + "/missing': No such file or directory");
  { std::ofstream(d.path + "/file") << "x"; }
  OsError e = Platform::Posix().CreateDirectories(d.path + "/file/sub");
  CHECK(e.ToStatus("create run directory", d.path + "/file/sub").message() ==
        "cannot create run directory '" + d.path + "/file/sub': Not a directory");
}

// Intent: the two clocks read what std::chrono reads (system_clock for the wall clock, steady_clock for the
// monotonic one; both CLOCK_* on Linux), and the Platform's clocks are the same clocks.
TEST_CASE("posix platform: clocks") {
  using namespace std::chrono;
  const uint64_t wall_before = duration_cast<nanoseconds>(system_clock::now().time_since_epoch()).count();
  const uint64_t mono_before = duration_cast<nanoseconds>(steady_clock::now().time_since_epoch()).count();
  const uint64_t wall = WallNanos(), mono = MonotonicNanos();
  const uint64_t pwall = Platform::Posix().WallNanos(), pmono = Platform::Posix().MonotonicNanos();
  const uint64_t wall_after = duration_cast<nanoseconds>(system_clock::now().time_since_epoch()).count();
  const uint64_t mono_after = duration_cast<nanoseconds>(steady_clock::now().time_since_epoch()).count();
  CHECK(wall_before <= wall);
  CHECK(wall <= pwall);
  CHECK(pwall <= wall_after);
  CHECK(mono_before <= mono);
  CHECK(mono <= pmono);
  CHECK(pmono <= mono_after);
}

}  // namespace fanfold
