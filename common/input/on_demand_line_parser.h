// OnDemandLineParser: the NDJSON reader's second pass for a line the DOM
// parser refused with a number error: it reads the line again with simdjson
// On-Demand, visiting and validating every value, and fills the slots the
// PointerTrie leads to. Numbers the DOM parser cannot hold (integers beyond
// 64 bits, 1e400) become their nearest double, +/-infinity beyond the double
// range. One per reader (owns a parser); not thread-safe.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>
#include <string_view>
#include <vector>

#include "common/base/value.h"
#include "common/input/pointer_trie.h"

namespace fanfold {

class OnDemandLineParser {
 public:
  OnDemandLineParser();
  ~OnDemandLineParser();
  OnDemandLineParser(const OnDemandLineParser&) = delete;
  OnDemandLineParser& operator=(const OnDemandLineParser&) = delete;

  // Parses line p[0, len), readable up to p + capacity (capacity >= len plus
  // simdjson's padding). Fills slots[] where the pointers of `nodes` end
  // (first occurrence of a duplicate key wins, marked with `generation`);
  // string values point into this parser until its next Parse. Returns
  // nullptr iff the line is one JSON object, else the reason it is not.
  // REQUIRES: slots already reset to missing; generation new for this line.
  const char* Parse(const char* p, size_t len, size_t capacity, std::vector<PointerNode>* nodes,
                    uint64_t generation, Value* slots);

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;  // keeps simdjson.h out of this header
};

// The value of a JSON number token (RFC 8259 section 6 grammar): an integer
// within [-2^63, 2^64) exactly, any other number as its nearest double, and
// a magnitude beyond the double range as +/-infinity (Python's json.loads
// does the same with "1e400"). Returns false iff text is not a JSON number.
bool ParseJsonNumber(std::string_view text, Value* out);

}  // namespace fanfold
