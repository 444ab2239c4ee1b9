#include "common/input/ndjson_line_parser.h"

#include <simdjson.h>

#include <memory>

#include "common/input/ndjson/line_parser_impl.h"

namespace fanfold {
namespace {

using ndjson_walk::IsJsonSpace;

LineVerdict VerdictOf(simdjson::error_code err) {
  switch (err) {
    case simdjson::SUCCESS: return LineVerdict::kRecord;
    case simdjson::UTF8_ERROR: return LineVerdict::kNotUtf8;
    case simdjson::CAPACITY: return LineVerdict::kTooLong;
    default: return LineVerdict::kInvalid;
  }
}

}  // namespace

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
