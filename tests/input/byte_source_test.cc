// Tests for OpenShardSource / MemorySource (common/input/byte_source.h). Compressed
// inputs are made in the test by libzstd and zlib themselves, so a decoder
// bug cannot hide behind a matching encoder bug of ours.
#include "common/input/byte_source.h"

#include <doctest/doctest.h>
#include <stdlib.h>
#include <unistd.h>
#include <zlib.h>
#include <zstd.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <random>
#include <string>

#include "tests/input/gzip_test_util.h"

namespace fanfold {
namespace {

// A fresh directory under /tmp, removed with everything in it.
class TempDir {
 public:
  TempDir() {
    char tmpl[] = "/tmp/fanfold-bytes-XXXXXX";
    path_ = mkdtemp(tmpl);
  }
  ~TempDir() { std::filesystem::remove_all(path_); }
  std::string Write(const std::string& name, const std::string& bytes) const {
    std::string p = path_ + "/" + name;
    std::ofstream(p, std::ios::binary) << bytes;
    return p;
  }
  const std::string& path() const { return path_; }

 private:
  std::string path_;
};

// Text that compresses but is not trivially repetitive.
std::string SampleText(size_t n, uint32_t seed) {
  std::mt19937 rng(seed);
  static const char* kWords[] = {"alpha", "ledger", "7", "queue", "{\"k\":", "}", "\n", "-", "retry", "0.25"};
  std::string s;
  while (s.size() < n) s += kWords[rng() % 10];
  s.resize(n);
  return s;
}

std::string ZstdFrame(const std::string& data) {
  ZSTD_CCtx* cctx = ZSTD_createCCtx();
  ZSTD_CCtx_setParameter(cctx, ZSTD_c_compressionLevel, 3);
  ZSTD_CCtx_setParameter(cctx, ZSTD_c_checksumFlag, 1);  // so any flipped byte is detected
  std::string out(ZSTD_compressBound(data.size()), '\0');
  size_t n = ZSTD_compress2(cctx, out.data(), out.size(), data.data(), data.size());
  ZSTD_freeCCtx(cctx);
  REQUIRE(!ZSTD_isError(n));
  out.resize(n);
  return out;
}

// Reads src to its end in pieces of at most `cap` bytes.
Result<std::string> ReadAll(ByteSource& src, size_t cap) {
  std::string all;
  std::string buf(cap, '\0');
  for (;;) {
    Result<size_t> n = src.Read(buf.data(), cap);
    if (!n.ok()) return n.status();
    if (*n == 0) return all;
    all.append(buf.data(), *n);
  }
}

Result<std::string> OpenAndReadAll(const std::string& path, size_t cap = 1 << 16) {
  auto src = OpenShardSource(path, CompressionFromName(path));
  if (!src.ok()) return src.status();
  return ReadAll(**src, cap);
}

}  // namespace

// The decoder is chosen by the last extension only.
TEST_CASE("CompressionFromName") {
  CHECK(CompressionFromName("/d/a.ndjson.zst") == Compression::kZstd);
  CHECK(CompressionFromName("a.csv.gz") == Compression::kGzip);
  CHECK(CompressionFromName("a.zst.csv") == Compression::kNone);
  CHECK(CompressionFromName("a.tgz") == Compression::kNone);
  CHECK(CompressionFromName("zst") == Compression::kNone);
  CHECK(std::string(CompressionName(Compression::kGzip)) == "gzip");
}

// zstd data made by libzstd decodes to the original bytes, whatever the read size.
TEST_CASE("zstd round trip") {
  TempDir dir;
  std::string data = SampleText(3'000'000, 1);
  std::string frame = ZstdFrame(data);
  std::string path = dir.Write("a.zst", frame);
  for (size_t cap : {size_t{1} << 20, size_t{4096}, size_t{7}}) {
    auto src = OpenShardSource(path, Compression::kZstd);
    REQUIRE(src.ok());
    Result<std::string> got = ReadAll(**src, cap);
    REQUIRE(got.ok());
    CHECK(*got == data);
    CHECK((*src)->compressed_bytes() == frame.size());
    // After the clean end, further reads keep returning 0.
    char c;
    CHECK((*src)->Read(&c, 1).value() == 0);
  }
}

// Concatenated frames (as `cat a.zst b.zst` makes) decode as one stream; RFC 8878 section 3.1.
TEST_CASE("zstd multiple frames") {
  TempDir dir;
  std::string a = SampleText(200'000, 2), b = SampleText(5, 3), c = SampleText(1'500'000, 4);
  std::string path = dir.Write("m.zst", ZstdFrame(a) + ZstdFrame("") + ZstdFrame(b) + ZstdFrame(c));
  Result<std::string> got = OpenAndReadAll(path);
  REQUIRE(got.ok());
  CHECK(*got == a + b + c);
}

// A zstd file cut short is Corrupt and says "truncated", at any cut point.
TEST_CASE("zstd truncated") {
  TempDir dir;
  std::string frame = ZstdFrame(SampleText(400'000, 5));
  for (size_t keep : {size_t{6}, frame.size() / 2, frame.size() - 1}) {
    std::string path = dir.Write("t.zst", frame.substr(0, keep));
    Result<std::string> got = OpenAndReadAll(path);
    REQUIRE(!got.ok());
    CHECK(got.status().code() == Status::Code::kCorrupt);
    CHECK(got.status().message() ==
          "'" + path + "': truncated zstd frame at compressed byte " + std::to_string(keep));
  }
  // A whole frame followed by a cut second frame is truncated too.
  std::string two = frame + frame.substr(0, 100);
  Result<std::string> got = OpenAndReadAll(dir.Write("t2.zst", two));
  CHECK(!got.ok());
  CHECK(got.status().message().find("truncated zstd frame") != std::string::npos);
}

// Flipped bytes are Corrupt (the frame checksum guarantees detection) and the offset is named.
TEST_CASE("zstd corrupt") {
  TempDir dir;
  std::string frame = ZstdFrame(SampleText(400'000, 6));
  frame[frame.size() / 2] ^= 0x5A;
  frame[frame.size() / 2 + 1] ^= 0x33;
  std::string path = dir.Write("c.zst", frame);
  Result<std::string> got = OpenAndReadAll(path);
  REQUIRE(!got.ok());
  CHECK(got.status().code() == Status::Code::kCorrupt);
  CHECK(got.status().message().rfind("'" + path + "': corrupt zstd data at compressed byte ", 0) == 0);
  // Garbage after a complete frame is not silently ignored.
  got = OpenAndReadAll(dir.Write("g.zst", ZstdFrame("abc") + "garbage!"));
  CHECK(!got.ok());
}

// gzip data made by zlib decodes; several members concatenated (RFC 1952 section 2.2) read as one stream.
TEST_CASE("gzip round trip and multiple members") {
  TempDir dir;
  std::string a = SampleText(2'500'000, 7), b = SampleText(10, 8);
  std::string member = GzipMember(a);
  std::string path = dir.Write("a.gz", member);
  auto src = OpenShardSource(path, Compression::kGzip);
  REQUIRE(src.ok());
  Result<std::string> got = ReadAll(**src, 5000);
  REQUIRE(got.ok());
  CHECK(*got == a);
  CHECK((*src)->compressed_bytes() == member.size());

  got = OpenAndReadAll(dir.Write("m.gz", member + GzipMember("") + GzipMember(b)), 1 << 20);
  REQUIRE(got.ok());
  CHECK(*got == a + b);
}

// A gzip file cut short is Corrupt "truncated"; a flipped byte is Corrupt (CRC-32 trailer, RFC 1952).
TEST_CASE("gzip truncated and corrupt") {
  TempDir dir;
  std::string member = GzipMember(SampleText(300'000, 9));
  for (size_t keep : {size_t{3}, size_t{12}, member.size() / 2, member.size() - 1}) {
    std::string path = dir.Write("t.gz", member.substr(0, keep));
    Result<std::string> got = OpenAndReadAll(path);
    REQUIRE(!got.ok());
    CHECK(got.status().code() == Status::Code::kCorrupt);
    CHECK(got.status().message() ==
          "'" + path + "': truncated gzip member at compressed byte " + std::to_string(keep));
  }
  std::string bad = member;
  bad[bad.size() / 2] ^= 0x40;
  std::string path = dir.Write("c.gz", bad);
  Result<std::string> got = OpenAndReadAll(path);
  REQUIRE(!got.ok());
  CHECK(got.status().code() == Status::Code::kCorrupt);
  CHECK(got.status().message().rfind("'" + path + "': corrupt gzip data at compressed byte ", 0) == 0);
}

// Magic numbers: zstd 28 B5 2F FD (RFC 8878 section 3.1.1), gzip 1F 8B (RFC 1952 section 2.3.1).
TEST_CASE("wrong magic names the file, the expected format and what was found") {
  TempDir dir;
  std::string text = dir.Write("text.zst", "{\"ts\":1}\n");
  auto src = OpenShardSource(text, Compression::kZstd);
  REQUIRE(!src.ok());
  CHECK(src.status().message() ==
        "'" + text + "': not zstd data: expected magic bytes 28 B5 2F FD, found 7B 22 74 73 (text \"{\"ts\")");

  std::string gz_named_zst = dir.Write("g.zst", GzipMember("hello"));
  src = OpenShardSource(gz_named_zst, Compression::kZstd);
  REQUIRE(!src.ok());
  CHECK(src.status().message().find("(gzip data)") != std::string::npos);

  std::string zst_named_gz = dir.Write("z.gz", ZstdFrame("hello"));
  src = OpenShardSource(zst_named_gz, Compression::kGzip);
  REQUIRE(!src.ok());
  CHECK(src.status().message() ==
        "'" + zst_named_gz + "': not gzip data: expected magic bytes 1F 8B, found 28 B5 2F FD (zstd data)");

  std::string empty = dir.Write("e.gz", "");
  src = OpenShardSource(empty, Compression::kGzip);
  REQUIRE(!src.ok());
  CHECK(src.status().message().find("the file is empty") != std::string::npos);
}

// A byte range of a plain file yields exactly those bytes; bad ranges are refused.
TEST_CASE("byte ranges of plain files") {
  TempDir dir;
  std::string data = SampleText(10'000, 10);
  std::string path = dir.Write("plain.ndjson", data);
  struct Range {
    uint64_t offset, length;
  };
  for (Range r : {Range{0, 10'000}, Range{100, 250}, Range{9'999, 1}, Range{10'000, 0}, Range{3, UINT64_MAX}}) {
    auto src = OpenShardSource(path, Compression::kNone, r.offset, r.length);
    REQUIRE(src.ok());
    Result<std::string> got = ReadAll(**src, 64);
    REQUIRE(got.ok());
    CHECK(*got == data.substr(r.offset, r.length == UINT64_MAX ? std::string::npos : r.length));
  }
  auto past = OpenShardSource(path, Compression::kNone, 9'000, 1'001);
  REQUIRE(!past.ok());
  CHECK(past.status().message().find("runs past the end of the file (10000 bytes)") != std::string::npos);
  auto compressed = OpenShardSource(path, Compression::kZstd, 10, 10);
  CHECK(!compressed.ok());
  CHECK(compressed.status().code() == Status::Code::kInvalidArgument);
  // The whole file read through the plain path counts every byte.
  auto whole = OpenShardSource(path, Compression::kNone);
  REQUIRE(whole.ok());
  CHECK(ReadAll(**whole, 1 << 20).value() == data);
  CHECK((*whole)->compressed_bytes() == data.size());
}

// Open errors carry the path and the C library's errno text (glibc strerror wording).
TEST_CASE("missing file and directory messages") {
  auto src = OpenShardSource("/nonexistent-fanfold/x/y.zst", Compression::kZstd);
  REQUIRE(!src.ok());
  CHECK(src.status().code() == Status::Code::kIoError);
  CHECK(src.status().message() == "cannot open '/nonexistent-fanfold/x/y.zst': No such file or directory");
  TempDir dir;
  src = OpenShardSource(dir.path(), Compression::kNone);
  REQUIRE(!src.ok());
  CHECK(src.status().message() == "cannot open '" + dir.path() + "': Is a directory");
}

// MemorySource hands back its bytes in order, then reports the end.
TEST_CASE("MemorySource") {
  auto src = MemorySource("abcdefg");
  Result<std::string> got = ReadAll(*src, 3);
  REQUIRE(got.ok());
  CHECK(*got == "abcdefg");
  CHECK(src->compressed_bytes() == 7);
}

}  // namespace fanfold
