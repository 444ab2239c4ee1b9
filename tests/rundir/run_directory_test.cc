#include "coordinator/rundir/run_directory.h"

#include <doctest/doctest.h>
#include <fcntl.h>
#include <unistd.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <string>

#include <xxhash.h>

#include "common/base/byte_io.h"

namespace fanfold {
namespace {

namespace fs = std::filesystem;

struct RunDirFixture {
  std::string root;
  std::string path;
  RunDirFixture() {
    root = (fs::temp_directory_path() / "fanfold-rundirtest-XXXXXX").string();
    REQUIRE(::mkdtemp(root.data()) != nullptr);
    path = root + "/run";
  }
  ~RunDirFixture() { fs::remove_all(root); }

  std::unique_ptr<RunDirectory> Create() {
    RunManifest m;
    m.job_path = "/nowhere/job.json";
    m.format = "ndjson";
    m.fingerprint = "0123456789abcdef";
    auto d = RunDirectory::Create(path, m, true);
    REQUIRE(d.ok());
    return std::move(d).value();
  }
  std::unique_ptr<RunDirectory> Open() {
    RunManifest m;
    auto d = RunDirectory::Open(path, &m);
    REQUIRE(d.ok());
    return std::move(d).value();
  }
  std::string Pack(int n) const {
    char name[32];
    snprintf(name, sizeof name, "pack-%06d.ffpk", n);
    return path + "/partials/" + name;
  }
};

// A pack frame as docs/run-directory.md specifies it (magic, shard, length, XXH3-64 of those 16 bytes).
std::string Frame(uint32_t shard, uint64_t length) {
  std::string f;
  ByteWriter w(&f);
  w.U32(0x4B504646);
  w.U32(shard);
  w.U64(length);
  w.U64(XXH3_64bits(f.data(), 16));
  return f;
}

void Append(const std::string& file, const std::string& bytes) {
  std::ofstream out(file, std::ios::binary | std::ios::app);
  out << bytes;
}

std::string Load(const RunDirectory& d, uint32_t shard) {
  std::string out;
  REQUIRE(d.LoadPartial(shard, &out).ok());
  return out;
}

long StatusKib(const char* key) {
  std::ifstream in("/proc/self/status");
  std::string line;
  while (std::getline(in, line))
    if (line.rfind(key, 0) == 0) return std::strtol(line.c_str() + std::strlen(key), nullptr, 10);
  return -1;
}

}  // namespace

// Intent: committed partials come back byte for byte after the directory is reopened, each from its own pack.
TEST_CASE("run directory: committed partials survive a reopen") {
  RunDirFixture f;
  {
    auto d = f.Create();
    REQUIRE(d->StagePartial(3, "three").ok());
    REQUIRE(d->StagePartial(5, std::string(10000, 'x')).ok());
    REQUIRE(d->Commit().ok());
    REQUIRE(d->StagePartial(7, "seven").ok());
    REQUIRE(d->Commit().ok());
    CHECK(d->committed_count() == 3);
  }
  auto d = f.Open();
  CHECK(d->committed_count() == 3);
  CHECK(Load(*d, 3) == "three");
  CHECK(Load(*d, 5) == std::string(10000, 'x'));
  CHECK(Load(*d, 7) == "seven");
  CHECK(Load(*d, 4).empty());
}

// Intent: partials are keyed on disk by slot: after run.json maps the shards
// to other slots (a refresh re-sorted them), each shard reads the partial of
// its slot, the frames carry slots (the layout of docs/run-directory.md), and
// a reopen maps through the manifest's slots again.
TEST_CASE("run directory: shards reach their partials through their slots") {
  RunDirFixture f;
  RunManifest m;
  m.format = "ndjson";
  m.fingerprint = "0123456789abcdef";
  m.shards.shards.resize(2);
  m.shards.shards[1].index = 1;
  {
    auto created = RunDirectory::Create(f.path, m, true);
    REQUIRE(created.ok());
    auto& d = *created;
    REQUIRE(d->StagePartial(0, "zero").ok());
    REQUIRE(d->StagePartial(1, "one").ok());
    REQUIRE(d->Commit().ok());
    // Refreshed: a new shard 0 (slot 2) sorts before the old two (slots 0, 1).
    m.shards.shards.resize(3);
    m.shards.shards[2].index = 2;
    m.slots = {2, 0, 1};
    REQUIRE(d->RewriteManifest(m).ok());
    CHECK(d->FirstUnusedSlot() == 2);
    CHECK(Load(*d, 1) == "zero");
    CHECK(Load(*d, 2) == "one");
    CHECK(Load(*d, 0).empty());
    CHECK(d->saved_shard_count() == 2);
    REQUIRE(d->StagePartial(0, "new").ok());
    REQUIRE(d->Commit().ok());
  }
  std::ifstream in(f.Pack(2), std::ios::binary);
  std::string pack((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  CHECK(pack == Frame(2, 3) + "new");
  auto d = f.Open();
  CHECK(Load(*d, 0) == "new");
  CHECK(Load(*d, 1) == "zero");
  CHECK(Load(*d, 2) == "one");
  CHECK(d->FirstUnusedSlot() == 3);
}

// Intent: a shard staged but not committed is readable through LoadStagedOrCommitted only, and gone after a crash.
TEST_CASE("run directory: staged partials are not committed ones") {
  RunDirFixture f;
  {
    auto d = f.Create();
    REQUIRE(d->StagePartial(2, "staged").ok());
    std::string out;
    REQUIRE(d->LoadStagedOrCommitted(2, &out).ok());
    CHECK(out == "staged");
    CHECK(Load(*d, 2).empty());
    // A coordinator killed now leaves the temporary pack behind.
    fs::copy_file(f.Pack(1) + ".tmp", f.root + "/kept.tmp");
  }
  fs::copy_file(f.root + "/kept.tmp", f.Pack(1) + ".tmp");
  auto d = f.Open();
  CHECK(d->committed_count() == 0);
  CHECK(!fs::exists(f.Pack(1) + ".tmp"));  // docs/run-directory.md: leftover .tmp files are removed on open
}

// Intent: when a shard is in two packs the higher-numbered one wins (docs/run-directory.md).
TEST_CASE("run directory: the newest pack wins") {
  RunDirFixture f;
  {
    auto d = f.Create();
    REQUIRE(d->StagePartial(1, "old").ok());
    REQUIRE(d->Commit().ok());
    REQUIRE(d->StagePartial(1, "new").ok());
    REQUIRE(d->Commit().ok());
  }
  auto d = f.Open();
  CHECK(Load(*d, 1) == "new");
}

// Intent: reading stops at the first torn or damaged frame; the entries before it stay usable.
TEST_CASE("run directory: torn and damaged frames end a pack") {
  RunDirFixture f;
  {
    auto d = f.Create();
    REQUIRE(d->StagePartial(0, "zero").ok());
    REQUIRE(d->StagePartial(1, "one").ok());
    REQUIRE(d->Commit().ok());
  }
  SUBCASE("a frame promising more bytes than the file holds") {
    Append(f.Pack(1), Frame(2, 100) + "short");
  }
  SUBCASE("half a frame") {
    Append(f.Pack(1), Frame(2, 3).substr(0, 10));
  }
  SUBCASE("a frame whose checksum does not match, then a good one") {
    std::string bad = Frame(2, 3);
    bad[4] ^= 1;  // shard index changed after the checksum was taken
    Append(f.Pack(1), bad + "two" + Frame(3, 5) + "three");
  }
  auto d = f.Open();
  CHECK(d->committed_count() == 2);
  CHECK(Load(*d, 0) == "zero");
  CHECK(Load(*d, 1) == "one");
  CHECK(Load(*d, 2).empty());
  CHECK(Load(*d, 3).empty());
}

// Intent: a new commit after a reopen gets a pack number above every existing pack, never overwriting one.
TEST_CASE("run directory: commits after a reopen go to a new pack") {
  RunDirFixture f;
  {
    auto d = f.Create();
    REQUIRE(d->StagePartial(0, "zero").ok());
    REQUIRE(d->Commit().ok());
  }
  {
    auto d = f.Open();
    REQUIRE(d->StagePartial(1, "one").ok());
    REQUIRE(d->Commit().ok());
  }
  CHECK(fs::exists(f.Pack(1)));
  CHECK(fs::exists(f.Pack(2)));
  auto d = f.Open();
  CHECK(Load(*d, 0) == "zero");
  CHECK(Load(*d, 1) == "one");
}

// Intent: opening a run directory reads the packs' frames, not their partials, so its memory does not grow with
// the size of the packs (a sparse 512 MiB partial would otherwise be read whole).
TEST_CASE("run directory: opening does not read partials into memory") {
  RunDirFixture f;
  { auto d = f.Create(); }
  constexpr uint64_t kBig = uint64_t{512} << 20;
  Append(f.Pack(1), Frame(9, kBig));
  {
    int fd = ::open(f.Pack(1).c_str(), O_WRONLY | O_CLOEXEC);
    REQUIRE(fd >= 0);
    REQUIRE(::ftruncate(fd, static_cast<off_t>(24 + kBig)) == 0);  // sparse: no disk blocks behind it
    ::close(fd);
  }
  // proc(5): writing 5 to clear_refs resets VmHWM to the current RSS (Linux 4.0+).
  std::ofstream("/proc/self/clear_refs") << "5";
  const long rss_before = StatusKib("VmRSS:");
  REQUIRE(rss_before > 0);
  if (StatusKib("VmHWM:") > rss_before + 1024) {
    MESSAGE("this kernel cannot reset VmHWM; the memory check is skipped");
    return;
  }
  auto d = f.Open();
  const long hwm_after = StatusKib("VmHWM:");
  CHECK(d->committed_count() == 1);
  CHECK(hwm_after - rss_before < 64 * 1024);  // KiB; reading the partial would add 512 MiB
}

}  // namespace fanfold

namespace fanfold {

// Intent: staged partials are buffered (small ones cost no write each) yet
// readable before the commit, whether still in the buffer, already flushed,
// or written straight through (a large one); after the commit and a reopen
// the pack holds them all, each with its own frame.
TEST_CASE("run directory: buffered staging reads back and commits every partial") {
  RunDirFixture f;
  std::map<uint32_t, std::string> staged;
  for (uint32_t s = 0; s < 300; ++s) staged[s] = std::string(1 + (s * 7919) % 9000, static_cast<char>('a' + s % 26));
  staged[300] = std::string((size_t{1} << 20) + 17, 'L');  // past the buffer: written directly
  staged[301] = "after the large one";
  {
    auto d = f.Create();
    for (const auto& [s, bytes] : staged) REQUIRE(d->StagePartial(s, bytes).ok());
    for (const auto& [s, bytes] : staged) {
      std::string out;
      REQUIRE(d->LoadStagedOrCommitted(s, &out).ok());
      CHECK_MESSAGE(out == bytes, "shard " << s);
    }
    REQUIRE(d->Commit().ok());
  }
  auto d = f.Open();
  CHECK(d->committed_count() == staged.size());
  for (const auto& [s, bytes] : staged) CHECK_MESSAGE(Load(*d, s) == bytes, "shard " << s);
}

}  // namespace fanfold
