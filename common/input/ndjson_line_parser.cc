#include "common/input/ndjson_line_parser.h"

#include <simdjson.h>

#include <algorithm>
#include <charconv>
#include <climits>
#include <cstring>
#include <limits>
#include <utility>

#include "common/input/json_number.h"

namespace fanfold {
namespace {

bool IsJsonSpace(char c) { return c == ' ' || c == '\t' || c == '\r' || c == '\n'; }

LineVerdict VerdictOf(simdjson::error_code err) {
  switch (err) {
    case simdjson::SUCCESS: return LineVerdict::kRecord;
    case simdjson::UTF8_ERROR: return LineVerdict::kNotUtf8;
    case simdjson::CAPACITY: return LineVerdict::kTooLong;
    default: return LineVerdict::kInvalid;
  }
}

// An open object or array of the walk: its bracket, its trie node (-1 where
// no pointer leads) and, for an array, the index of the current element.
struct Frame {
  char bracket;
  int32_t node;
  int64_t index;
};

}  // namespace

struct NdjsonLineParser::Impl {
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
      while (e > b && IsJsonSpace(e[-1])) --e;
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
    while (end > t && IsJsonSpace(end[-1])) --end;
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

// The walk over stage 1's structural indexes: the JSON grammar (RFC 8259
// section 2-4) as a loop with an explicit stack, so it checks every comma,
// colon and bracket without building a tape, and converts only the values
// a pointer ends at.
template <bool kSentinel>
LineVerdict NdjsonLineParser::Impl::Walk(const char* p, const uint32_t* idx, size_t n, size_t len, Value* slots) {
  const bool every = checks == ValueChecks::kEveryValue;
  // The character at structural i (NUL past the last one).
  auto at = [&](size_t i) -> char { return kSentinel || i < n ? p[idx[i]] : '\0'; };
  // Where the token at structural i ends: the next structural, or the end.
  auto token_end = [&](size_t i) -> const char* { return p + (kSentinel || i + 1 < n ? idx[i + 1] : len); };
  if (at(0) != '{') {
    if (at(0) == '[' || at(0) == '"' || at(0) == '-' || (at(0) >= '0' && at(0) <= '9') || at(0) == 't' ||
        at(0) == 'f' || at(0) == 'n')
      return LineVerdict::kNotObject;
    return LineVerdict::kInvalid;
  }
  Frame* const stack = frames.get();
  size_t depth = 0;
  stack[depth++] = Frame{'{', 0, 0};
  // The innermost open scope's bracket and trie node, kept out of the
  // stack: most structurals need them, few open or close a scope.
  bool in_object = true;
  int32_t top_node = 0;
  size_t i = 1;
  int32_t node = -1;  // trie node of the value about to be read
  // Each label is a state of the grammar; every path ends at a return.
object_begin:
  if (at(i) == '}') {
    ++i;
    goto scope_end;
  }
object_key : {
  if (at(i) != '"') return LineVerdict::kInvalid;
  if (top_node < 0 && !BackslashBefore(p + idx[i], token_end(i))) {
    // No pointer leads into this object and the key holds no backslash:
    // it has nothing to check (stage 1 checked its bytes) and names
    // nothing.
    if (at(i + 1) != ':') return LineVerdict::kInvalid;
    i += 2;
    node = -1;
    goto value;
  }
  std::string_view key;
  if (!StringAt(p + idx[i], token_end(i), true, &key)) return LineVerdict::kInvalid;
  if (at(i + 1) != ':') return LineVerdict::kInvalid;
  i += 2;
  node = Member(top_node, key);
  goto value;
}
array_begin:
  if (at(i) == ']') {
    ++i;
    goto scope_end;
  }
array_value:
  node = Element(top_node, stack[depth - 1].index);
value : {
  const int slot = node >= 0 ? node_data[node].slot : -1;
  const char c = at(i);
  // Strings first, outside the switch: the commonest value, and on most
  // lines (no pointer reads it, no backslash) two tests decide it.
  if (c == '"') {
    // A string no pointer reads and without backslashes has nothing to
    // check (stage 1 checked its UTF-8 and control bytes).
    if (slot >= 0 || BackslashBefore(p + idx[i], token_end(i))) {
      std::string_view s;
      if (!StringAt(p + idx[i], token_end(i), slot >= 0, &s)) return LineVerdict::kInvalid;
      if (slot >= 0) {
        // The slot is still missing (each slot is filled at most once a
        // line, after the reset the contract requires), so a string
        // differs from it in its kind and text alone.
        slots[slot].kind = ValueKind::kString;
        slots[slot].str = s;
      }
    }
    ++i;
    goto after_value;
  }
  switch (c) {
    case '{':
    case '[':
      if (depth >= kMaxDepth) return LineVerdict::kTooDeep;
      if (slot >= 0) slots[slot] = Value::Other();
      stack[depth++] = Frame{c, node, 0};
      top_node = node;
      ++i;
      if (c == '{') {
        in_object = true;
        goto object_begin;
      }
      in_object = false;
      goto array_begin;
    case 't':
    case 'f':
    case 'n':
      if (slot >= 0 || every) {
        const std::string_view t = Token(p + idx[i], token_end(i));
        Value v;
        if (t == "true")
          v = Value::Bool(true);
        else if (t == "false")
          v = Value::Bool(false);
        else if (t == "null")
          v = Value::Null();
        else
          return LineVerdict::kInvalid;
        if (slot >= 0) slots[slot] = v;
      } else if (GluedString(p + idx[i], token_end(i))) {
        return LineVerdict::kInvalid;
      }
      break;
    case '-':
    case '0':
    case '1':
    case '2':
    case '3':
    case '4':
    case '5':
    case '6':
    case '7':
    case '8':
    case '9':
      if (slot >= 0) {
        if (!ParseJsonNumber(Token(p + idx[i], token_end(i)), &slots[slot])) return LineVerdict::kBadNumber;
      } else if (every && !IsJsonNumber(Token(p + idx[i], token_end(i)))) {
        return LineVerdict::kBadNumber;
      } else if (GluedString(p + idx[i], token_end(i))) {
        return LineVerdict::kInvalid;
      }
      break;
    default: return LineVerdict::kInvalid;  // no value starts here (a bracket, comma, colon or stray text)
  }
  ++i;
}
after_value:
  if (in_object) {
    if (at(i) == ',') {
      ++i;
      goto object_key;
    }
    if (at(i) != '}') return LineVerdict::kInvalid;
  } else {
    if (at(i) == ',') {
      ++i;
      ++stack[depth - 1].index;
      goto array_value;
    }
    if (at(i) != ']') return LineVerdict::kInvalid;
  }
  ++i;
scope_end:
  if (--depth > 0) {
    in_object = stack[depth - 1].bracket == '{';
    top_node = stack[depth - 1].node;
    goto after_value;
  }
  return i == n ? LineVerdict::kRecord : LineVerdict::kInvalid;  // nothing after the root object
}

NdjsonLineParser::NdjsonLineParser(ValueChecks checks) : impl_(std::make_unique<Impl>(checks)) {}
NdjsonLineParser::~NdjsonLineParser() = default;

LineVerdict NdjsonLineParser::Parse(const char* p, size_t len, size_t capacity, std::vector<PointerNode>* nodes,
                                    uint64_t generation, Value* slots) {
  Impl& im = *impl_;
  if (capacity < len + simdjson::SIMDJSON_PADDING) return LineVerdict::kTooLong;  // the caller's contract
  if (len > simdjson::SIMDJSON_MAXSIZE_BYTES || !im.Reserve(len)) return LineVerdict::kTooLong;
  im.nodes = nodes;
  im.node_data = nodes->data();
  im.generation = generation;
  const simdjson::error_code err =
      im.stage1->stage1(reinterpret_cast<const uint8_t*>(p), len, simdjson::stage1_mode::regular);
  if (err != simdjson::SUCCESS) return VerdictOf(err);
  im.bs_next = p;  // not looked for yet (BackslashBefore looks past it)
  im.bs_limit = p + len;
  const uint32_t* idx = im.stage1->structural_indexes.get();
  const size_t n = im.stage1->n_structural_indexes;
  // Stage 1 ends its indexes with len; the reader's lines end at a line
  // break or the chunk's padding (spaces), which no rule of the walk takes.
  if (idx[n] == len && IsJsonSpace(p[len])) return im.Walk<true>(p, idx, n, len, slots);
  return im.Walk<false>(p, idx, n, len, slots);
}

bool NdjsonLineParser::IndexGroup(const char* p, size_t len, size_t capacity) {
  Impl& im = *impl_;
  im.group = nullptr;
  if (capacity < len + simdjson::SIMDJSON_PADDING || len > simdjson::SIMDJSON_MAXSIZE_BYTES || !im.Reserve(len))
    return false;
  if (im.stage1->stage1(reinterpret_cast<const uint8_t*>(p), len, simdjson::stage1_mode::regular) !=
      simdjson::SUCCESS)
    return false;
  im.group = p;
  im.group_end = p + len;
  im.group_next = 0;
  im.next_backslash = nullptr;  // not looked for yet
  im.group_idx = im.stage1->structural_indexes.get();
  im.group_total = im.stage1->n_structural_indexes;
  return true;
}

void NdjsonLineParser::GroupIndexes(const uint32_t** idx, size_t* n) const {
  *idx = impl_->group_idx;
  *n = impl_->group_total;
}

bool NdjsonLineParser::AdoptGroup(const char* p, size_t len, size_t capacity, uint32_t* idx, size_t n) {
  Impl& im = *impl_;
  im.group = nullptr;
  // The checks of IndexGroup but stage 1; Reserve makes the unescaping
  // room (and the simdjson object whose unescaper StringAt uses).
  if (capacity < len + simdjson::SIMDJSON_PADDING || len > simdjson::SIMDJSON_MAXSIZE_BYTES || !im.Reserve(len))
    return false;
  im.group = p;
  im.group_end = p + len;
  im.group_next = 0;
  im.next_backslash = nullptr;
  im.group_idx = idx;
  im.group_total = n;
  return true;
}

LineVerdict NdjsonLineParser::ParseGrouped(const char* p, size_t len, std::vector<PointerNode>* nodes,
                                           uint64_t generation, Value* slots, size_t index_end) {
  Impl& im = *impl_;
  im.nodes = nodes;
  im.node_data = nodes->data();
  im.generation = generation;
  im.strings_end = im.strings.get();
  // One search per backslash in the group, not one per line.
  if (im.next_backslash == nullptr || im.next_backslash < p) {
    const void* b = std::memchr(p, '\\', static_cast<size_t>(im.group_end - p));
    im.next_backslash = b != nullptr ? static_cast<const char*>(b) : im.group_end;
  }
  im.bs_next = im.next_backslash;
  im.bs_limit = im.group_end;
  uint32_t* const idx = im.group_idx;
  const size_t total = im.group_total;  // idx[total] is the group's length
  const auto begin = static_cast<uint32_t>(p - im.group);
  const auto end = static_cast<uint32_t>(begin + len);
  size_t first = im.group_next;
  while (first < total && idx[first] < begin) ++first;  // an earlier line skipped as blank
  // The first index past the line. Lines of one file tend to have the same
  // shape, so first try the previous line's count of indexes; else a
  // binary search within the next 64 indexes for most lines (a few dozen
  // structurals each), else the rest.
  size_t last = index_end != kFindIndexes ? index_end : first + im.last_line_indexes;
  if (index_end == kFindIndexes && !(last <= total && (last == first || idx[last - 1] < end) && (last == total || idx[last] >= end))) {
    const size_t near = std::min(total, first + 64);
    uint32_t* const stop = near > first && idx[near - 1] >= end ? idx + near : idx + total;
    last = static_cast<size_t>(std::lower_bound(idx + first, stop, end) - idx);
    im.last_line_indexes = last - first;
  }
  im.group_next = last;
  // The line's indexes, relative to the group, ended as stage 1 ends a
  // line's own (its length at index n, p[len] a space): the next line's
  // first index is lent for that and given back.
  const uint32_t lent = idx[last];
  idx[last] = end;
  const LineVerdict v = im.Walk<true>(im.group, idx + first, last - first, end, slots);
  idx[last] = lent;
  im.next_backslash = im.bs_next;  // the walk may have searched further
  return v;
}

std::string_view NdjsonLineParser::Unescaped() const {
  const Impl& im = *impl_;
  if (im.strings_end == im.strings.get()) return {};
  return {reinterpret_cast<const char*>(im.strings.get()), static_cast<size_t>(im.strings_end - im.strings.get())};
}

}  // namespace fanfold
