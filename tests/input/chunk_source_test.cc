// Tests for ChunkSource: cutting a file at arbitrary byte offsets hands every
// line to exactly one chunk, whole.
#include <doctest/doctest.h>

#include <cstdio>
#include <random>
#include <string>
#include <unistd.h>

#include "common/input/chunk_source.h"
#include "common/port/files/file_util.h"

using namespace fanfold;

namespace {
std::string ReadAll(ByteSource& s, size_t step) {
  std::string out;
  std::string buf(step, '\0');
  for (;;) {
    Result<size_t> n = s.Read(buf.data(), buf.size());
    REQUIRE(n.ok());
    if (*n == 0) return out;
    out.append(buf.data(), *n);
  }
}
}  // namespace

TEST_CASE("chunks of any size partition the lines of a file") {
  // Intent: concatenating the chunks in order reproduces the file exactly,
  // and each chunk starts at a line start.
  std::mt19937_64 rng(7);
  char tmpl[] = "/tmp/fanfold-chunk-test-XXXXXX";
  int fd = mkstemp(tmpl);
  REQUIRE(fd >= 0);
  close(fd);
  for (int round = 0; round < 30; ++round) {
    std::string text;
    int lines = 1 + static_cast<int>(rng() % 200);
    for (int i = 0; i < lines; ++i) {
      text += std::string(rng() % (round % 3 == 0 ? 3000 : 40), 'a' + i % 26);
      if (i + 1 < lines || rng() % 2) text += '\n';  // sometimes no final newline
    }
    REQUIRE(WriteFileAtomic(tmpl, text).ok());
    uint64_t chunk = 1 + rng() % 600;
    std::string joined;
    uint64_t counted = 0;  // the chunks' compressed_bytes(), added up
    for (uint64_t off = 0; off < text.size(); off += chunk) {
      uint64_t len = std::min<uint64_t>(chunk, text.size() - off);
      Result<std::unique_ptr<ByteSource>> s = OpenChunkSource(tmpl, off, len);
      REQUIRE(s.ok());
      std::string part = ReadAll(**s, 1 + rng() % 700);
      counted += (*s)->compressed_bytes();
      const size_t start = joined.size();  // where this chunk's bytes begin in the file
      if (!part.empty()) {
        CHECK((start == 0 || text[start - 1] == '\n'));
        CHECK(start >= off);  // its first line starts inside the chunk
        CHECK(start < off + len);
      }
      joined += part;
    }
    CHECK(joined == text);
    // Intent: the chunks' input byte counts add up to the file's size, each
    // byte once (they used to count the blocks read past each chunk's end).
    CHECK(counted == text.size());
  }
  unlink(tmpl);
}
