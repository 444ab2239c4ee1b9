// The state of an NdjsonLineParser (common/input/ndjson_line_parser.h)
// and the grammar walk over a line's structural indexes, shared by the
// parser's two files: ndjson_line_parser.cc (stage 1, groups, the public
// calls) and line_walk.cc (the walk). Internal to those two; not an API.
#pragma once

#include <simdjson.h>

#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <cstring>
#include <memory>
#include <string_view>
#include <vector>

#include "common/base/value.h"
#include "common/input/ndjson_line_parser.h"
#include "common/input/pointer_trie.h"
#include "common/input/record_reader.h"

namespace fanfold {
namespace ndjson_walk {

inline bool IsJsonSpace(char c) { return c == ' ' || c == '\t' || c == '\r' || c == '\n'; }

// An open object or array of the walk: its bracket, its trie node (-1 where
// no pointer leads) and, for an array, the index of the current element.
struct Frame {
  char bracket;
  int32_t node;
  int64_t index;
};

}  // namespace ndjson_walk

struct NdjsonLineParser::Impl {
  using Frame = ndjson_walk::Frame;
  explicit Impl(ValueChecks c) : checks(c) {}

  static constexpr size_t kMaxDepth = 1024;

  ValueChecks checks;
  std::unique_ptr<simdjson::internal::dom_parser_implementation> stage1;
  // The open objects and arrays, frames[0, depth): a fixed array, so that
  // opening and closing one is an index update without a capacity check.
  std::unique_ptr<Frame[]> frames = std::make_unique<Frame[]>(kMaxDepth);
  std::unique_ptr<uint8_t[]> strings;  // unescaped strings of the current line
  size_t strings_cap = 0;
  uint8_t* strings_end = nullptr;
  std::vector<PointerNode>* nodes = nullptr;
  PointerNode* node_data = nullptr;  // nodes->data(), for the current line
  uint64_t generation = 0;
  // The first backslash at or after the walk's position, or bs_limit (the
  // end of the text searched) if none: a string before it has no escape
  // to check or undo (most strings; most lines have no backslash at all).
  // It only moves forward, one search per backslash passed, so a line
  // costs one search per backslash in it, not one per string.
  const char* bs_next = nullptr;
  const char* bs_limit = nullptr;
  // The group IndexGroup accepted: its text, its end, the next structural
  // index of it not yet given to a line, and its first backslash at or
  // after the current line (group_end if none; null before the first line).
  const char* group = nullptr;
  const char* group_end = nullptr;
  size_t group_next = 0;
  // The group's structural indexes (group_idx[group_total] is its length):
  // stage1's own, or those AdoptGroup was given.
  uint32_t* group_idx = nullptr;
  size_t group_total = 0;
  const char* next_backslash = nullptr;
  // How many structural indexes the last line parsed from a group had.
  size_t last_line_indexes = 0;

  // True iff [b, e) may hold a backslash: false iff the first backslash at
  // or after b lies at or after e. REQUIRES: b no earlier than any b
  // passed before for this text.
  bool BackslashBefore(const char* b, const char* e) {
    if (bs_next < b) {
      const void* f = std::memchr(b, '\\', static_cast<size_t>(bs_limit - b));
      bs_next = f != nullptr ? static_cast<const char*>(f) : bs_limit;
    }
    return bs_next < e;
  }

  // Room for len bytes of line (stage 1's indexes, unescaped strings).
  bool Reserve(size_t len) {
    if (stage1 == nullptr || stage1->capacity() < len) {
      const size_t cap = std::max<size_t>(len, size_t{1} << 16);
      if (stage1 == nullptr) {
        if (simdjson::get_active_implementation()->create_dom_parser_implementation(cap, kMaxDepth, stage1) !=
            simdjson::SUCCESS)
          return false;
      } else if (stage1->set_capacity(cap) != simdjson::SUCCESS) {
        return false;
      }
      strings_cap = cap + simdjson::SIMDJSON_PADDING;
      strings.reset(new uint8_t[strings_cap]);
    }
    strings_end = strings.get();
    return true;
  }

  // The child of ni that `key` names and no earlier duplicate took, or -1.
  int32_t Member(int32_t ni, std::string_view key) {
    if (ni < 0) return -1;
    const PointerNode& parent = node_data[ni];
    if ((parent.child_lengths & TokenLengthBit(key.size())) == 0) return -1;
    // A key is followed by at least '"' and ':' and the line's padding, so
    // 8 bytes from its start are readable.
    const uint64_t prefix = TokenPrefix(key.data(), key.size());
    if (!parent.child_table.empty()) {
      // The one child the key can be (pointer_trie.h): compare it whole.
      const int32_t c = parent.child_table[ChildHash(parent, prefix, key.size())];
      if (c < 0) return -1;
      PointerNode& child = node_data[c];
      if (child.prefix != prefix || child.token.size() != key.size()) return -1;
      if (key.size() > 8 &&
          (key.size() <= 16 ? child.suffix != TokenSuffix(key.data(), key.size())
                            : std::memcmp(child.token.data() + 8, key.data() + 8, key.size() - 8) != 0))
        return -1;
      if (child.seen == generation) return -1;  // duplicate keys: the first one wins
      child.seen = generation;
      return c;
    }
    for (uint32_t c : parent.children) {
      PointerNode& child = node_data[c];
      if (child.prefix != prefix || child.token.size() != key.size()) continue;
      if (key.size() > 8 && std::memcmp(child.token.data() + 8, key.data() + 8, key.size() - 8) != 0) continue;
      if (child.seen == generation) return -1;  // duplicate keys: the first one wins
      child.seen = generation;
      return static_cast<int32_t>(c);
    }
    return -1;
  }

  int32_t Element(int32_t ni, int64_t i) const {
    if (ni < 0 || i > node_data[ni].max_child_index) return -1;
    for (uint32_t c : node_data[ni].children)
      if (node_data[c].index == i) return static_cast<int32_t>(c);
    return -1;
  }

  // The text of the string whose opening quote is at q and whose token
  // (stage 1 has matched its quotes and checked its UTF-8 and control
  // characters) ends before `end`, the next structural character: the
  // line's own bytes when it has no backslash, else (only if `unescape`) its
  // unescaped text in `strings`. Returns false iff an escape is invalid
  // (simdjson's unescaper judges).
  bool StringAt(const char* q, const char* end, bool unescape, std::string_view* out) {
    const char* b = q + 1;
    const char* e = end;
    // Compact JSON puts the closing quote right before the next structural.
    if (!(e > b && e[-1] == '"'))
      while (e > b && ndjson_walk::IsJsonSpace(e[-1])) --e;
    if (e > b && e[-1] == '"') {
      --e;
    } else {
      // Not the shape stage 1 gives a string token; find the end by hand.
      e = b;
      while (*e != '"') e += *e == '\\' ? 2 : 1;
    }
    const size_t n = static_cast<size_t>(e - b);
    if (!BackslashBefore(b, e)) {
      *out = std::string_view(b, n);
      return true;
    }
    uint8_t* stop = stage1->parse_string(reinterpret_cast<const uint8_t*>(b), strings_end);
    if (stop == nullptr) return false;
    *out = std::string_view(reinterpret_cast<const char*>(strings_end), static_cast<size_t>(stop - strings_end));
    if (unescape) strings_end = stop;
    return true;
  }

  // The scalar token that starts at t and ends before `end` (the next
  // structural character, or the line's end), without trailing spaces.
  static std::string_view Token(const char* t, const char* end) {
    while (end > t && ndjson_walk::IsJsonSpace(end[-1])) --end;
    return std::string_view(t, static_cast<size_t>(end - t));
  }

  // True iff a string is glued to the scalar token at t (`5"a"`): stage 1
  // makes the quote part of the token, and then the token ends with it.
  static bool GluedString(const char* t, const char* end) {
    const std::string_view token = Token(t, end);
    return token.back() == '"';
  }

  // Walks the line whose n structural characters are at p + idx[0..n) and
  // which ends at p + len.
  // kSentinel: idx[n] == len and p[len] is a space (so the character "at"
  // structural n ends every rule); otherwise each read is bounds-checked.
  template <bool kSentinel>
  LineVerdict Walk(const char* p, const uint32_t* idx, size_t n, size_t len, Value* slots);
};

}  // namespace fanfold
