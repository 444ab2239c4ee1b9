// NdjsonLineParser: the NDJSON reader's parser for one line. simdjson's
// stage 1 (the structural and UTF-8 pass, on the SIMD kernel simdjson picks
// at run time) indexes the line; our own walk over those indexes then checks
// the JSON grammar with an explicit stack (no tape, no recursion) and fills
// the slots the PointerTrie leads to, converting only the values a pointer
// ends at. What it checks depends on ValueChecks (the job
// file's "inputs"/"check_unread_values"; docs/job-file.md, "Malformed
// records"):
//   kReadValues  (default) every structural rule of RFC 8259 everywhere in
//                the line — brackets and braces closed and matching, commas
//                and colons in place, keys are strings, one object and
//                nothing after it — plus UTF-8, control characters and
//                escape sequences in every string (keys too), and the full
//                syntax of every value a pointer reads. Not checked: the
//                rest of a token that no pointer reads once its first
//                character says number (- or a digit) or literal (t, f, n);
//                a token runs to the next space, comma, colon, bracket,
//                brace or quote ("tru", "01", "1.5x" pass there; a string
//                glued to such a token, as in 5"a", does not).
//   kEveryValue  all of the above and the spelling of every number and
//                literal: exactly RFC 8259 (the reader's behaviour before
//                kReadValues existed).
// Numbers a pointer reads: integers within [-2^63, 2^64) are exact integer
// Values, other numbers their nearest double, +/-infinity beyond the double
// range (Python's json.loads does the same with "1e400"). One per reader
// (owns a parser); not thread-safe.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>
#include <string_view>
#include <vector>

#include "common/base/value.h"
#include "common/input/pointer_trie.h"
#include "common/input/record_reader.h"

namespace fanfold {

// NdjsonLineParser::ParseGrouped finds the line's indexes itself.
inline constexpr size_t kFindIndexes = SIZE_MAX;

// Why a line is not a record (kRecord: it is one).
enum class LineVerdict {
  kRecord,
  kNotObject,  // valid JSON, but not an object
  kTooDeep,    // nested deeper than the parser's limit
  kBadNumber,  // a number that is not valid JSON
  kNotUtf8,    // bytes that are not UTF-8
  kTooLong,    // longer than the parser can take
  kInvalid,    // any other break of the JSON grammar
};

class NdjsonLineParser {
 public:
  explicit NdjsonLineParser(ValueChecks checks = ValueChecks::kReadValues);
  ~NdjsonLineParser();
  NdjsonLineParser(const NdjsonLineParser&) = delete;
  NdjsonLineParser& operator=(const NdjsonLineParser&) = delete;

  // Parses line p[0, len), readable up to p + capacity (capacity >= len plus
  // simdjson's padding, else kTooLong). Fills slots[] where the pointers of `nodes` end
  // (first occurrence of a duplicate key wins, marked with `generation`);
  // string values point into this parser until its next Parse. Returns
  // kRecord iff the line is one JSON object as the checks above judge it;
  // slots are then complete (otherwise some may be filled).
  // REQUIRES: slots already reset to missing; generation new for this line.
  LineVerdict Parse(const char* p, size_t len, size_t capacity, std::vector<PointerNode>* nodes, uint64_t generation,
                    Value* slots);

  // Stage 1 over a group of whole lines at once, p[0, len) (len at a line
  // break or the end of the text), readable up to p + capacity: one call
  // instead of one per line, which costs stage 1 about half its work on
  // lines of a few hundred bytes. Returns true iff stage 1 accepts the
  // group as a whole: then no string spans a line break (a line break
  // inside a string is a control character stage 1 refuses), so every line
  // starts outside a string and each line's structural indexes are the
  // group's between its bounds, as stage 1 on the line alone gives them,
  // and stage 1 on each line alone would succeed. Then ParseGrouped may
  // parse the group's lines, in order. On false (any stage 1 error in any
  // line), parse each line with Parse instead.
  bool IndexGroup(const char* p, size_t len, size_t capacity);

  // The structural indexes of the group IndexGroup accepted last: *n of
  // them, relative to the group's start, and then its length (*idx holds
  // *n + 1 entries). Valid until the next call of this parser.
  void GroupIndexes(const uint32_t** idx, size_t* n) const;

  // As IndexGroup, with the indexes another parser's IndexGroup made of
  // the same bytes (GroupIndexes, copied): idx[0, n] as that gives them,
  // writable, unchanged by the call (ParseGrouped lends one entry while it
  // parses a line and gives it back) and kept until the group's last
  // ParseGrouped. Returns false where IndexGroup would for a reason of
  // size (then parse each line with Parse).
  bool AdoptGroup(const char* p, size_t len, size_t capacity, uint32_t* idx, size_t n);

  // As Parse, for the line p[0, len) of the group IndexGroup (or
  // AdoptGroup) accepted last:
  // the same verdict and slots, from the group's indexes. index_end: the
  // first of the group's indexes at or past the line's end (its line break),
  // if the caller knows it (the block study's lines), else kFindIndexes.
  // REQUIRES: lines passed in order; p[len] is a line break or '\r' (or the
  // group's end); no Parse since IndexGroup.
  LineVerdict ParseGrouped(const char* p, size_t len, std::vector<PointerNode>* nodes, uint64_t generation,
                           Value* slots, size_t index_end = kFindIndexes);

  // The memory holding the strings the last Parse or ParseGrouped unescaped
  // (those with a backslash; empty if none): a slot's string lies in it or
  // in the line's own bytes. Valid until the parser's next call.
  std::string_view Unescaped() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;  // keeps simdjson.h out of this header
};

}  // namespace fanfold
