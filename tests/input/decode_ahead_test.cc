// Tests for DecodeAhead (common/input/decode_ahead.h) and ChunkBuffer's block
// way (common/input/chunk_buffer.h): the helper thread and the inline mode
// hand out the same bytes, the same bytes before an error and the same
// error, on whole, truncated and corrupt zstd and gzip files and plain
// files; the records an NDJSON reader sees through them are those it sees
// reading the file directly. Compressed files are made by libzstd and
// zlib themselves (the formats' reference implementations).
#include "common/input/decode_ahead.h"

#include <doctest/doctest.h>
#include <stdlib.h>
#include <zstd.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <random>
#include <string>
#include <thread>
#include <vector>

#include "common/input/chunk_buffer.h"
#include "common/input/field_table.h"
#include "common/input/ndjson_reader.h"
#include "common/input/record_reader.h"
#include "tests/input/gzip_test_util.h"
#include "tests/input/reader_test_util.h"

namespace fanfold {
namespace {

class Scratch {
 public:
  Scratch() {
    char tmpl[] = "/tmp/fanfold-ahead-XXXXXX";
    path_ = mkdtemp(tmpl);
  }
  ~Scratch() { std::filesystem::remove_all(path_); }
  std::string Write(const std::string& name, const std::string& bytes) const {
    std::string p = path_ + "/" + name;
    std::ofstream(p, std::ios::binary) << bytes;
    return p;
  }

 private:
  std::string path_;
};

// NDJSON lines of varied length; every `long_every`-th line is long_len
// bytes longer (records that cross many blocks).
std::string Lines(size_t count, uint32_t seed, size_t long_every = 0, size_t long_len = 0) {
  std::mt19937 rng(seed);
  std::string s;
  for (size_t i = 0; i < count; ++i) {
    s += "{\"n\":" + std::to_string(i) + ",\"w\":\"";
    size_t len = rng() % 90;
    if (long_every != 0 && i % long_every == long_every - 1) len += long_len;
    for (size_t k = 0; k < len; ++k) s += static_cast<char>('a' + rng() % 26);
    s += "\"}\n";
  }
  return s;
}

std::string Zstd(const std::string& data) {
  std::string out(ZSTD_compressBound(data.size()), '\0');
  ZSTD_CCtx* c = ZSTD_createCCtx();
  ZSTD_CCtx_setParameter(c, ZSTD_c_checksumFlag, 1);
  size_t n = ZSTD_compress2(c, out.data(), out.size(), data.data(), data.size());
  ZSTD_freeCCtx(c);
  REQUIRE(!ZSTD_isError(n));
  out.resize(n);
  return out;
}

Result<std::unique_ptr<RecordReader>> MakeNdjsonReaderForTest(const FieldTable& fields, const ChunkOptions& options) {
  Result<std::unique_ptr<NdjsonReader>> r = NdjsonReader::Create(fields, options, ValueChecks::kReadValues);
  if (!r.ok()) return r.status();
  return std::unique_ptr<RecordReader>(std::move(r.value()));
}

std::string WithoutDigits(std::string s) {
  s.erase(std::remove_if(s.begin(), s.end(), [](char c) { return c >= '0' && c <= '9'; }), s.end());
  return s;
}

// What a reader saw: every record, then "error: ..." or "end".
std::vector<std::string> ReadThrough(const std::string& path, int mode, size_t block_bytes,
                                     size_t chunk_bytes = kDefaultChunkBytes,
                                     size_t max_record = size_t{256} << 20) {
  FieldTable fields;
  fields.InternField("/n");
  fields.InternField("/w");
  // mode 0: the file directly; 1: inline blocks; 2: the helper thread.
  DecodeAhead ahead(mode == 2, block_bytes);  // outlives the source it wraps
  Result<std::unique_ptr<ByteSource>> src = OpenShardSource(path, CompressionFromName(path));
  if (!src.ok()) return {"open error: " + src.status().message()};
  std::unique_ptr<ByteSource> s = std::move(src.value());
  if (mode != 0) s = ahead.Wrap(std::move(s));
  Result<std::unique_ptr<RecordReader>> reader = MakeNdjsonReaderForTest(fields, ChunkOptions(chunk_bytes, max_record));
  REQUIRE(reader.ok());
  Collect sink(2);
  Status st = (*reader)->Read(*s, sink, nullptr);
  std::vector<std::string> out = std::move(sink.rows);
  out.push_back(st.ok() ? "end" : "error: " + st.message());
  return out;
}

// Every byte the source yields, then its error (or "end").
std::string DrainBlocks(const std::string& path, bool threaded, size_t block_bytes) {
  DecodeAhead ahead(threaded, block_bytes);
  Result<std::unique_ptr<ByteSource>> src = OpenShardSource(path, CompressionFromName(path));
  REQUIRE(src.ok());
  std::unique_ptr<ByteSource> s = ahead.Wrap(std::move(src.value()));
  std::string all;
  for (;;) {
    LentBlock b;
    Result<size_t> n = s->lender()->Lend(&b);
    if (!n.ok()) return all + "|error: " + n.status().message();
    if (*n == 0) return all + "|end";
    all.append(b.data(), *n);
    ReturnBlock(&b);
  }
}

}  // namespace

// Intent: the same bytes and records whichever way the blocks are filled,
// for every codec, with blocks small enough that records cross them.
TEST_CASE("decode ahead: threaded, inline and direct reads agree on whole files") {
  Scratch dir;
  const std::string text = Lines(20000, 3, 97, 70000);  // some records longer than the room before a block
  const std::vector<std::string> paths = {dir.Write("a.ndjson", text), dir.Write("a.ndjson.zst", Zstd(text)),
                                          dir.Write("a.ndjson.gz", GzipMember(text))};
  for (const std::string& p : paths) {
    CAPTURE(p);
    CHECK(DrainBlocks(p, false, 4096) == text + "|end");
    CHECK(DrainBlocks(p, true, 4096) == text + "|end");
    const std::vector<std::string> direct = ReadThrough(p, 0, 4096);
    REQUIRE(direct.size() == 20001);
    for (size_t block : {size_t{4096}, size_t{100000}, kAheadBlockBytes}) {
      CHECK(ReadThrough(p, 1, block) == direct);
      CHECK(ReadThrough(p, 2, block) == direct);
    }
  }
}

// Intent: on truncated and corrupt zstd and gzip files the helper thread and
// the inline mode give the same bytes before the error and the same error;
// the records before it and the error match between them too. Positions of
// damage are spread over the file so some fall mid-block.
TEST_CASE("decode ahead: the same partial bytes and errors on damaged files") {
  Scratch dir;
  const std::string text = Lines(30000, 5);
  const std::string z = Zstd(text);
  const std::string g = GzipMember(text);
  std::vector<std::string> paths;
  for (size_t cut : {z.size() / 7, z.size() / 2, z.size() - 3}) paths.push_back(dir.Write("t" + std::to_string(cut) + ".ndjson.zst", z.substr(0, cut)));
  for (size_t cut : {g.size() / 5, g.size() / 2, g.size() - 5}) paths.push_back(dir.Write("t" + std::to_string(cut) + ".ndjson.gz", g.substr(0, cut)));
  for (size_t at : {z.size() / 3, z.size() * 3 / 4}) {
    std::string bad = z;
    bad[at] ^= 0x5A;
    paths.push_back(dir.Write("c" + std::to_string(at) + ".ndjson.zst", bad));
  }
  for (size_t at : {g.size() / 3, g.size() * 3 / 4}) {
    std::string bad = g;
    bad[at] ^= 0x5A;
    paths.push_back(dir.Write("c" + std::to_string(at) + ".ndjson.gz", bad));
  }
  for (const std::string& p : paths) {
    CAPTURE(p);
    for (size_t block : {size_t{4096}, size_t{65536}}) {
      const std::string inline_bytes = DrainBlocks(p, false, block);
      CHECK(inline_bytes.find("|error: ") != std::string::npos);
      CHECK(DrainBlocks(p, true, block) == inline_bytes);
      const std::vector<std::string> inline_records = ReadThrough(p, 1, block);
      CHECK(inline_records.back().rfind("error: ", 0) == 0);
      CHECK(ReadThrough(p, 2, block) == inline_records);
      // The error is the one a direct read reports, but for the offset: a
      // direct read asks the decoder for up to 4 MiB at a time, and libzstd
      // decodes a frame that fits that room in one call, so a damaged one
      // is reported at the frame's start instead of where decoding stopped
      // (and the records before the error may end at another line).
      CHECK(WithoutDigits(ReadThrough(p, 0, block).back()) == WithoutDigits(inline_records.back()));
    }
  }
}

// Intent: the record limit holds exactly as with a direct read: a record
// longer than max_record_bytes fails at its line, a shorter one is read,
// whichever way the blocks arrive.
TEST_CASE("decode ahead: the record limit is the same through blocks") {
  Scratch dir;
  const std::string text = Lines(3000, 9, 500, 150000);  // records of ~150 kB
  const std::string p = dir.Write("l.ndjson.zst", Zstd(text));
  for (size_t max_record : {size_t{1} << 17, size_t{1} << 18, size_t{1} << 20}) {
    CAPTURE(max_record);
    const std::vector<std::string> direct = ReadThrough(p, 0, 0, 1 << 16, max_record);
    for (size_t block : {size_t{4096}, size_t{65536}, size_t{1} << 20}) {
      CAPTURE(block);
      CHECK(ReadThrough(p, 1, block, 1 << 16, max_record) == direct);
      CHECK(ReadThrough(p, 2, block, 1 << 16, max_record) == direct);
    }
  }
}

// Intent: a reader that stops early (the sink says stop) and many shards in a
// row through one helper thread leave nothing behind and read on correctly.
TEST_CASE("decode ahead: early stops and shard after shard on one helper") {
  Scratch dir;
  const std::string text = Lines(5000, 11);
  const std::string p = dir.Write("s.ndjson.zst", Zstd(text));
  FieldTable fields;
  fields.InternField("/n");
  DecodeAhead ahead(true, 4096);
  Result<std::unique_ptr<RecordReader>> reader = MakeNdjsonReaderForTest(fields, ChunkOptions(1 << 16));
  REQUIRE(reader.ok());
  for (int round = 0; round < 50; ++round) {
    Result<std::unique_ptr<ByteSource>> src = OpenShardSource(p, Compression::kZstd);
    REQUIRE(src.ok());
    std::unique_ptr<ByteSource> s = ahead.Wrap(std::move(src.value()));
    const size_t stop = round % 2 == 0 ? 7 + static_cast<size_t>(round) * 13 : SIZE_MAX;
    Collect sink(1, stop);
    REQUIRE((*reader)->Read(*s, sink, nullptr).ok());
    CHECK(sink.rows.size() == std::min<size_t>(stop, 5000));
    CHECK(sink.rows.back() == std::to_string(sink.rows.size() - 1));
  }
}

// Intent: "auto" threads only when a core is left over for the helper.
TEST_CASE("decode ahead: the auto rule") {
  const unsigned cores = std::thread::hardware_concurrency();
  CHECK(AheadThreaded(AheadChoice::kOn, cores));
  CHECK(!AheadThreaded(AheadChoice::kOff, 1));
  CHECK(!AheadThreaded(AheadChoice::kAuto, 0));
  CHECK(!AheadThreaded(AheadChoice::kAuto, cores));
  CHECK(AheadThreaded(AheadChoice::kAuto, 1) == (cores > 1));
}

}  // namespace fanfold
