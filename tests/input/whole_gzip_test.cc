// Tests for OpenWholeGzip (common/input/whole_gzip.h) and its place in
// OpenShardSource. Gzip files are made in the test by zlib itself (not by
// libdeflate, the decoder under test); their layout is RFC 1952's: a
// member ends with CRC-32 and ISIZE (the size modulo 2^32, little-endian),
// and members may be concatenated (section 2.2).
#include "common/input/whole_gzip.h"

#include <fcntl.h>
#include <stdlib.h>
#include <unistd.h>
#include <zlib.h>

#include <filesystem>
#include <fstream>
#include <random>
#include <string>

#include <doctest/doctest.h>

#include "common/input/byte_source.h"
#include "tests/input/gzip_test_util.h"

namespace fanfold {
namespace {

std::string Text(size_t n, uint32_t seed) {
  std::mt19937 rng(seed);
  static const char* kWords[] = {"{\"lamp\":\"L-1\",", "\"w\":", "49.2", "}\n", "dim", "fault", "0", "\"x\""};
  std::string s;
  while (s.size() < n) s += kWords[rng() % 8];
  s.resize(n);
  return s;
}

struct Whole {
  bool taken = false;  // read whole (not declined)
  std::string bytes;   // what it decompressed to, when taken
};

Whole TryWhole(const std::string& file_bytes) {
  char tmpl[] = "/tmp/fanfold-whole-gz-XXXXXX";
  const int fd = mkstemp(tmpl);
  REQUIRE(fd >= 0);
  REQUIRE(::write(fd, file_bytes.data(), file_bytes.size()) == static_cast<ssize_t>(file_bytes.size()));
  Result<std::unique_ptr<ByteSource>> src = OpenWholeGzip(tmpl, fd, file_bytes.size());
  CHECK(::lseek(fd, 0, SEEK_CUR) == static_cast<off_t>(file_bytes.size()));  // offset untouched (pread)
  ::close(fd);
  ::unlink(tmpl);
  REQUIRE(src.ok());
  Whole w;
  if (*src == nullptr) return w;
  w.taken = true;
  char buf[70000];
  for (;;) {
    Result<size_t> n = (*src)->Read(buf, sizeof buf);
    REQUIRE(n.ok());
    if (*n == 0) break;
    w.bytes.append(buf, *n);
  }
  CHECK((*src)->compressed_bytes() == file_bytes.size());
  return w;
}

}  // namespace

// One member: read whole, the bytes zlib compressed come back; the same
// shard object again reuses its buffers (a second, smaller file).
TEST_CASE("a single-member gzip file is read whole") {
  const std::string a = Text(3'000'000, 1);
  Whole w = TryWhole(GzipMember(a));
  CHECK(w.taken);
  CHECK(w.bytes == a);
  const std::string b = Text(1000, 2);
  Whole w2 = TryWhole(GzipMember(b));
  CHECK(w2.taken);
  CHECK(w2.bytes == b);
  Whole empty = TryWhole(GzipMember(""));
  CHECK(empty.taken);
  CHECK(empty.bytes.empty());
}

// Concatenated members (RFC 1952 section 2.2) are one stream: read whole
// too, the buffer growing from the last member's small ISIZE.
TEST_CASE("a multi-member gzip file is read whole, member after member") {
  const std::string a = Text(2'000'000, 6), b = Text(300'000, 7), c = Text(5, 8);
  Whole w = TryWhole(GzipMember(a) + GzipMember(b) + GzipMember("") + GzipMember(c));
  CHECK(w.taken);
  CHECK(w.bytes == a + b + c);
  Whole two = TryWhole(GzipMember(c) + GzipMember(a));
  CHECK(two.taken);
  CHECK(two.bytes == c + a);
}

// A damaged file, a truncated one, a trailer whose ISIZE does not match,
// bytes after a member that are no member, or no gzip magic: declined, so
// the streaming reader takes the file and words any error.
TEST_CASE("what the whole-file path declines") {
  const std::string a = Text(200'000, 3);
  const std::string m = GzipMember(a);
  CHECK_FALSE(TryWhole(m + std::string(4, '\0')).taken);  // bytes after the member that start no member
  CHECK_FALSE(TryWhole(m.substr(0, m.size() - 1)).taken);
  CHECK_FALSE(TryWhole(m.substr(0, m.size() / 2)).taken);
  std::string flipped = m;
  flipped[m.size() / 2] ^= 0x10;
  CHECK_FALSE(TryWhole(flipped).taken);
  for (int delta : {-1, 1}) {  // ISIZE one less / one more than the data
    std::string lying = m;
    lying[lying.size() - 4] = static_cast<char>(static_cast<unsigned char>(lying[lying.size() - 4]) + delta);
    CHECK_FALSE(TryWhole(lying).taken);
  }
  // A trailer promising more than kWholeGzipMaxOutputBytes: declined before any buffer is taken.
  std::string big = m;
  const uint32_t claim = static_cast<uint32_t>(kWholeGzipMaxOutputBytes + 1);
  for (int k = 0; k < 4; ++k) big[big.size() - 4 + k] = static_cast<char>((claim >> (8 * k)) & 0xFF);
  CHECK_FALSE(TryWhole(big).taken);
  CHECK_FALSE(TryWhole("plain text, not gzip at all\n").taken);
  CHECK_FALSE(TryWhole(m.substr(0, 10)).taken);  // shorter than any member
}

// Through OpenShardSource: a multi-member file reads as its members' texts
// in order; a member whose ISIZE lies is refused (zlib's streaming inflate
// refuses it too, RFC 1952 section 2.3.1); a truncated file keeps the
// streaming reader's message naming the file and the byte.
TEST_CASE("declined gzip files stream with their errors unchanged") {
  char tmpl[] = "/tmp/fanfold-whole-gz-dir-XXXXXX";
  const std::string dir = mkdtemp(tmpl);
  auto write = [&](const std::string& name, const std::string& bytes) {
    std::ofstream(dir + "/" + name, std::ios::binary) << bytes;
    return dir + "/" + name;
  };
  auto read = [](const std::string& path) -> Result<std::string> {
    auto src = OpenShardSource(path, Compression::kGzip);
    if (!src.ok()) return src.status();
    std::string all;
    char buf[65536];
    for (;;) {
      Result<size_t> n = (*src)->Read(buf, sizeof buf);
      if (!n.ok()) return n.status();
      if (*n == 0) return all;
      all.append(buf, *n);
    }
  };
  const std::string a = Text(500'000, 4), b = Text(70'000, 5);
  const std::string m = GzipMember(a);
  Result<std::string> two = read(write("two.gz", m + GzipMember(b)));
  REQUIRE(two.ok());
  CHECK(*two == a + b);
  std::string lying = GzipMember(b);
  lying[lying.size() - 4] ^= 1;  // ISIZE wrong: zlib's streaming inflate refuses it too (RFC 1952 2.3.1)
  Result<std::string> bad_size = read(write("size.gz", lying));
  CHECK(!bad_size.ok());
  const std::string cut_path = write("cut.gz", m.substr(0, m.size() - 3));
  Result<std::string> cut = read(cut_path);
  REQUIRE(!cut.ok());
  CHECK(cut.status().message() ==
        "'" + cut_path + "': truncated gzip member at compressed byte " + std::to_string(m.size() - 3));
  std::filesystem::remove_all(dir);
}

}  // namespace fanfold
