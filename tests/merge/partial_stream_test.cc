// PartialStream: a stored partial read as a stream gives, group by group,
// the bytes OpenPartial's decompressed body holds (checked against the
// in-memory cursor over the same encoding), the counts OpenPartial reads,
// and OpenPartial's messages for bad bytes.
#include "coordinator/merge/partial_stream.h"

#include <doctest/doctest.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <memory>
#include <string>
#include <vector>

#include "common/partial/group_key.h"
#include "coordinator/merge/encoded_group_cursor.h"

namespace fanfold {
namespace {

std::vector<MeasureConfig> Configs(size_t n) {
  std::vector<MeasureConfig> c(n);
  c[0].kind = MeasureKind::kCount;
  for (size_t i = 1; i < n; ++i) c[i].kind = MeasureKind::kSum;
  return c;
}

// Two reductions (2 and 3 measures), `groups` groups in the first with keys
// of `key_bytes` bytes (long ones cross the stream's 64 KiB buffers), a few
// malformed samples and counts; zstd-compressed unless tiny.
std::string Stored(const std::vector<MeasureConfig>& a, const std::vector<MeasureConfig>& b, int groups,
                   size_t key_bytes) {
  PartialState p(std::vector<const std::vector<MeasureConfig>*>{&a, &b});
  p.header.fingerprint = 7;
  p.header.shard_index = 3;
  p.header.records = 1234;
  p.samples.push_back({17, "expected a value"});
  p.samples.push_back({40, "unclosed string"});
  p.field_present = {5, 0, 9};
  p.lookup_unmatched = {2};
  p.reductions[0].kept = 1000;
  p.reductions[1].kept = 999;
  for (int g = 0; g < groups; ++g) {
    std::string text = std::to_string(100000 + g);
    text.resize(std::max(key_bytes, text.size()), 'x');
    std::string key;
    AppendKeyValue(Value::String(text), &key);
    const Value v = Value::Number(g * 0.5);
    MeasureState* const* s = p.reductions[0].groups.FindOrAdd(key);
    for (size_t m = 0; m < a.size(); ++m) s[m]->Add(&v);
    key.clear();
    AppendKeyValue(Value::Number(g % 97), &key);
    s = p.reductions[1].groups.FindOrAdd(key);
    for (size_t m = 0; m < b.size(); ++m) s[m]->Add(&v);
  }
  std::string out;
  EncodePartial(p, &out);
  return out;
}

// Walks the stream and the in-memory cursor side by side.
void SameGroups(const StoredPartialBytes& bytes, const OpenedPartial& opened, size_t r, size_t m) {
  PartialGroupStream s(&bytes, r, m);
  EncodedGroupCursor c(opened.reductions[r].groups, m);
  REQUIRE(s.status().ok());
  CHECK(s.group_count() == c.group_count());
  while (c.Next()) {
    REQUIRE(s.Next());
    CHECK(s.key() == c.key());
    for (size_t j = 0; j < m; ++j) CHECK(s.state(j) == c.state(j));
  }
  CHECK_FALSE(s.Next());
  CHECK(s.status().ok());
  CHECK(s.groups_read() == c.group_count());
}

std::string TempFile(const std::string& name, const std::string& bytes, uint64_t pad) {
  const std::string path =
      std::filesystem::temp_directory_path() / ("ff-partial-stream-" + std::to_string(getpid()) + "-" + name);
  std::ofstream f(path, std::ios::binary);
  f << std::string(pad, '#') << bytes << "trailing pack bytes";
  return path;
}

// Intent: every group of both reductions, from memory and from a byte
// range of a file, small keys and keys longer than the buffers, raw and
// compressed bodies; the scan's counts are OpenPartial's.
TEST_CASE("partial stream: groups, counts and sizes as OpenPartial reads them") {
  const auto a = Configs(2);
  const auto b = Configs(3);
  for (auto [groups, key_bytes] : {std::pair{3, size_t{4}}, std::pair{5000, size_t{4}}, std::pair{40, size_t{150000}}}) {
    CAPTURE(groups);
    CAPTURE(key_bytes);
    const std::string stored = Stored(a, b, groups, key_bytes);
    OpenedPartial opened;
    REQUIRE(OpenPartial(stored, &opened).ok());
    const std::string path = TempFile("ok", stored, 333);
    std::unique_ptr<ReadableFile> file;
    REQUIRE(Platform::Posix().OpenForRead(path, &file).ok());
    auto in_file = StoredPartialBytes::InFile(std::move(file), path, 333, stored.size());
    auto in_memory = StoredPartialBytes::InMemory(stored);
    for (const StoredPartialBytes* bytes : {in_memory.get(), in_file.get()}) {
      OpenedPartial info;
      ScannedPartial scanned;
      REQUIRE(ScanStoredPartial(*bytes, {2, 3}, false, &info, &scanned).ok());
      CHECK(info.header.records == 1234);
      REQUIRE(info.samples.size() == 2);
      CHECK(info.samples[1].line == 40);
      CHECK(info.samples[1].reason == "unclosed string");
      CHECK(info.field_present == opened.field_present);
      CHECK(info.lookup_unmatched == opened.lookup_unmatched);
      REQUIRE(info.reductions.size() == 2);
      CHECK(info.reductions[0].kept == 1000);
      CHECK(info.reductions[1].kept == 999);
      CHECK(scanned.group_counts ==
            std::vector<uint64_t>{EncodedGroupCursor(opened.reductions[0].groups, 2).group_count(),
                                  EncodedGroupCursor(opened.reductions[1].groups, 3).group_count()});
      CHECK(scanned.raw_bytes == opened.body.size());
      SameGroups(*bytes, opened, 0, 2);
      SameGroups(*bytes, opened, 1, 3);
    }
    std::filesystem::remove(path);
  }
}

// Intent: bad stored bytes give OpenPartial's own messages from the scan
// (checksum first), and a stream over bytes whose checksum was trusted but
// that end early gives Corrupt, never a crash or a short walk taken as whole.
TEST_CASE("partial stream: corrupt and truncated partials are Corrupt with OpenPartial's messages") {
  const auto a = Configs(2);
  const auto b = Configs(3);
  const std::string good = Stored(a, b, 5000, 4);
  std::vector<std::string> bad;
  std::string flipped = good;
  flipped[good.size() / 2] ^= 0x40;
  bad.push_back(flipped);
  bad.push_back(good.substr(0, good.size() - 100));
  bad.push_back(good.substr(0, 100));
  for (const std::string& bytes : bad) {
    OpenedPartial opened;
    const Status expected = OpenPartial(bytes, &opened);
    REQUIRE_FALSE(expected.ok());
    OpenedPartial info;
    ScannedPartial scanned;
    const Status got = ScanStoredPartial(*StoredPartialBytes::InMemory(bytes), {2, 3}, false, &info, &scanned);
    CHECK(got.code() == Status::Code::kCorrupt);
    CHECK(got.message() == expected.message());
  }
  // Of another reduction count.
  OpenedPartial info;
  ScannedPartial scanned;
  CHECK(ScanStoredPartial(*StoredPartialBytes::InMemory(good), {2}, false, &info, &scanned).message() ==
        "partial state has 2 reductions; the plan has 1");
  // The body cut short with the header's stored length made to match
  // (checksum not checked): the stream fails, naming what it found.
  std::string cut = good.substr(0, kPartialHeaderSize + (good.size() - kPartialHeaderSize) / 2);
  const uint64_t z = cut.size() - kPartialHeaderSize;
  std::memcpy(cut.data() + 112, &z, 8);
  auto bytes = StoredPartialBytes::InMemory(cut);
  for (size_t r : {size_t{0}, size_t{1}}) {
    PartialGroupStream s(bytes.get(), r, r == 0 ? 2 : 3);
    uint64_t n = 0;
    while (s.Next()) ++n;
    CHECK(s.status().code() == Status::Code::kCorrupt);
    CHECK(s.status().message().find("truncated") != std::string::npos);
  }
}

// A file whose reads fail with EIO from byte `fail_at` on.
class FailingFile final : public ReadableFile {
 public:
  FailingFile(std::string bytes, uint64_t fail_at) : bytes_(std::move(bytes)), fail_at_(fail_at) {}
  OsError Size(uint64_t* size) override {
    *size = bytes_.size();
    return OsError::Ok();
  }
  OsError ReadAt(uint64_t offset, size_t n, char* buf) override {
    if (offset + n > fail_at_ || offset + n > bytes_.size()) return OsError::Of("pread", EIO);
    std::memcpy(buf, bytes_.data() + offset, n);
    return OsError::Ok();
  }

 private:
  std::string bytes_;
  uint64_t fail_at_;
};

// Intent: a pack the disk cannot read is reported as a read error naming
// the file, never as a checksum mismatch (which would call good bytes bad),
// wherever in the body the read fails; a whole read still scans clean.
TEST_CASE("partial stream: a read error of a pack is a read error, not a checksum mismatch") {
  const std::string good = Stored(Configs(2), Configs(3), 5000, 4);
  for (uint64_t fail_at : {uint64_t{kPartialHeaderSize + 10}, uint64_t{good.size() / 2}, uint64_t{good.size() - 5},
                           uint64_t{good.size()}}) {
    CAPTURE(fail_at);
    auto bytes = StoredPartialBytes::InFile(std::make_unique<FailingFile>(good, fail_at), "/packs/p0001", 0,
                                            good.size());
    OpenedPartial info;
    ScannedPartial scanned;
    const Status got = ScanStoredPartial(*bytes, {2, 3}, /*checksum_checked=*/false, &info, &scanned);
    if (fail_at == good.size()) {
      CHECK(got.ok());
      continue;
    }
    CHECK(got.code() != Status::Code::kCorrupt);
    CHECK(got.message().find("/packs/p0001") != std::string::npos);
    CHECK(got.message().find("checksum") == std::string::npos);
  }
}

}  // namespace
}  // namespace fanfold
