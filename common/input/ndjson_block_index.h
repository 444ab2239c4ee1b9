// NdjsonBlockStudy: the NDJSON reader's structural indexing (simdjson stage
// 1, NdjsonLineParser::IndexGroup) of a decompressed block, done by the
// thread that filled it (block_study.h): with decode ahead threaded, the
// helper thread, off the parsing thread. It indexes the whole lines inside
// the block — from after its first line break to its last one; the line
// cut by each edge is the reader's to index — in groups of about
// kNdjsonGroupBytes, each cut as the reader cuts its own, and leaves per
// group either its indexes (stage 1 accepted it) or a mark that stage 1
// refused it (the reader then parses its lines one by one, as it does for
// a group of its own that stage 1 refuses). For a group it indexed it also
// cuts the lines: where each ends and where its structural indexes end, so
// the reader neither searches for line breaks nor for a line's indexes.
// And one indexed group in kNdjsonParseEvery it parses whole, as the reader
// would (its own NdjsonLineParser, with the reader's checks, over its own
// copy of the reader's pointer trie): each line's verdict and the record's
// slots, which the reader hands on as they are, so that the helper thread
// takes a share of the parsing thread's walk.
// A group's indexes are exactly
// what IndexGroup gives on its bytes, so a line's verdict and values are
// the same whoever indexed it, and a line's verdict and values the same
// whoever parsed it. One study per reader; it owns its own parser and trie
// (it runs on another thread than the reader's).
#pragma once

#include <cstddef>
#include <cstdint>
#include <cstring>
#include <memory>
#include <utility>
#include <vector>

#include "common/base/scratch_arena.h"
#include "common/base/value.h"
#include "common/input/block_study.h"
#include "common/input/ndjson_line_parser.h"
#include "common/input/pointer_trie.h"
#include "common/input/record_reader.h"

namespace fanfold {

// About how many bytes of lines stage 1 indexes in one call: enough that
// its cost per call vanishes, few enough that a group it refuses (a line
// with bad UTF-8 or an unclosed string), parsed again line by line, costs
// little. Measured on the benchmark data (lines of ~200 bytes): 4 KiB
// groups take stage 1 from ~1,030 to ~560 instructions a line.
inline constexpr size_t kNdjsonGroupBytes = 4096;

// The study parses one indexed group in this many (counted over the
// study's blocks). Measured on the benchmark data (callgrind, -j 1 with
// the helper thread): a walk moved to the helper costs the parsing thread
// a copy of the record's slots instead; one in five leaves the helper ~50M
// instructions below the parsing thread on two shards, one in four only
// ~20M below.
inline constexpr size_t kNdjsonParseEvery = 5;
// The most bytes of parsed records' slots a block's note holds (a group
// whose records would pass it is only indexed): about the block's size,
// for the benchmark data (9 slots a line of ~200 bytes) a third of it.
inline constexpr size_t kNdjsonParsedBytes = size_t{1} << 20;

// Where a group of lines starting at p ends when lines go on to `stop`:
// the first line break kNdjsonGroupBytes or more past p (before stop), or
// null when there is none (the caller then ends it at its last line). The
// reader and the block study cut their groups with it alike.
inline const char* NdjsonGroupBreak(const char* p, const char* stop) {
  const size_t left = static_cast<size_t>(stop - p);
  if (left <= kNdjsonGroupBytes) return nullptr;
  return static_cast<const char*>(std::memchr(p + kNdjsonGroupBytes, '\n', left - kNdjsonGroupBytes));
}

// The groups of a block's whole lines, in order; each ends at a line break
// and the next begins right after it.
struct NdjsonBlockIndex final : BlockNote {
  struct Group {
    uint32_t begin;  // offset in the block of the group's first byte
    uint32_t end;    // offset of the line break that ends it
    bool indexed;    // stage 1 accepted it: its indexes and lines follow
    uint32_t first;  // its indexes: indexes[first, first + count] (the
    uint32_t count;  // last entry is its length, end - begin)
    uint32_t first_line;  // its lines (if indexed): lines[first_line, first_line + line_count)
    uint32_t line_count;
    bool parsed;  // (indexed, and) the study parsed its lines: see Line
  };
  // A line of an indexed group, every line in order (empty ones too).
  struct Line {
    uint32_t end;        // offset in the block of the line break that ends it
    uint32_t index_end;  // its indexes end at the group's index_end-th: those of the
                         // line are the group's [the line before's index_end, this)
    // Of a parsed group: whether the line is blank (no record, no verdict),
    // else its verdict and, for a record, where its slots are:
    // values[record * width, (record + 1) * width).
    bool blank;
    LineVerdict verdict;
    uint32_t record;
  };
  std::vector<Group> groups;
  std::vector<uint32_t> indexes;
  std::vector<Line> lines;
  // The parsed records' slots; their strings lie in the block or (those
  // unescaped) in `strings`: valid as long as the block's bytes and note.
  std::vector<Value> values;
  ScratchArena strings;
};

// Defined in ndjson_reader.cc.
class NdjsonBlockStudy final : public BlockStudy {
 public:
  // Indexes only (parses no group).
  NdjsonBlockStudy() = default;
  // Also parses (see above) records of `width` slots, filled where the
  // trie `nodes` (BuildPointerTrie; a copy of the reader's) leads, as a
  // reader with `checks` does.
  NdjsonBlockStudy(std::vector<PointerNode> nodes, size_t width, ValueChecks checks)
      : parser_(checks), nodes_(std::move(nodes)), width_(width), parse_(!nodes_.empty()) {}

  void Study(const char* data, size_t size, size_t readable_after, std::unique_ptr<BlockNote>* note) override;

 private:
  NdjsonLineParser parser_;
  std::vector<PointerNode> nodes_;
  size_t width_ = 0;
  bool parse_ = false;
  uint64_t generation_ = 0;   // of the last line parsed (the trie's `seen` marks)
  uint64_t indexed_groups_ = 0;  // indexed so far: picks the groups to parse
};

}  // namespace fanfold
