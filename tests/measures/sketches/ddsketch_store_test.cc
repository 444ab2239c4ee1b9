// DDSketchStore: rank lookup, the fold past kMaxSpan, and strict decoding.
#include "common/measures/sketches/ddsketch_store.h"

#include <doctest/doctest.h>

#include <string>

namespace fanfold {
namespace {

std::string EncodeOf(const DDSketchStore& s) {
  std::string out;
  ByteWriter w(&out);
  s.Encode(w);
  return out;
}

// Intent: ranks map to buckets in ascending and descending order, with
// counts > 1 covering consecutive ranks.
TEST_CASE("ddsketch_store: rank lookup") {
  DDSketchStore s;
  s.Add(5, 2);   // ranks 0, 1
  s.Add(-3);     // below: rank 0 now
  s.Add(40, 3);  // ranks 3..5
  REQUIRE(s.total() == 6);
  CHECK(s.lo() == -3);
  CHECK(s.hi() == 40);
  const int32_t ascending[] = {-3, 5, 5, 40, 40, 40};
  for (uint64_t r = 0; r < 6; ++r) CHECK(s.IndexOfRank(r) == ascending[r]);
  for (uint64_t r = 0; r < 6; ++r) CHECK(s.IndexOfRankDescending(r) == ascending[5 - r]);
  CHECK(s.CountAt(5) == 2);
  CHECK(s.CountAt(6) == 0);
}

// Intent: a span past kMaxSpan folds the lowest buckets into the lowest kept
// one (index hi - kMaxSpan + 1), the same whether the high value comes
// first, last, or through a merge.
TEST_CASE("ddsketch_store: fold depends only on the highest index") {
  const int32_t top = DDSketchStore::kMaxSpan + 100;
  const int32_t floor_index = top - DDSketchStore::kMaxSpan + 1;  // 101
  DDSketchStore low_first, high_first, merged, part;
  for (int32_t i : {0, 50, 150}) low_first.Add(i);
  low_first.Add(top);
  high_first.Add(top);
  for (int32_t i : {150, 50, 0}) high_first.Add(i);
  merged.Add(0);
  merged.Add(150);
  part.Add(top);
  part.Add(50);
  merged.MergeFrom(part);
  CHECK(low_first.lo() == floor_index);
  CHECK(low_first.CountAt(floor_index) == 2);  // 0 and 50 folded
  CHECK(low_first.CountAt(150) == 1);
  CHECK(EncodeOf(high_first) == EncodeOf(low_first));
  CHECK(EncodeOf(merged) == EncodeOf(low_first));
}

// Intent: decoding rejects zero ends, spans past kMaxSpan, indices outside
// the clamp range and truncation; it accepts what Encode writes.
TEST_CASE("ddsketch_store: strict decoding") {
  auto decode = [](const std::string& bytes) {
    DDSketchStore s;
    ByteReader r(bytes);
    return s.Decode(r) && r.at_end();
  };
  DDSketchStore s;
  s.Add(-7, 3);
  s.Add(2);
  CHECK(decode(EncodeOf(s)));
  auto make = [](uint64_t span, uint64_t zigzag_lo, std::initializer_list<uint64_t> counts) {
    std::string out;
    ByteWriter w(&out);
    w.Varint(span);
    w.Varint(zigzag_lo);
    for (uint64_t c : counts) w.Varint(c);
    return out;
  };
  CHECK(decode(make(2, 4, {1, 1})));
  CHECK_FALSE(decode(make(2, 4, {0, 1})));  // zero first bucket
  CHECK_FALSE(decode(make(2, 4, {1, 0})));  // zero last bucket
  CHECK_FALSE(decode(make(2, 4, {1})));     // truncated
  CHECK_FALSE(decode(make(2, uint64_t{1} << 40, {1, 1})));  // index past kMaxIndex
  // Runs of empty buckets: "0, r" stands for r empty buckets.
  CHECK(decode(make(5, 4, {1, 0, 3, 1})));
  CHECK_FALSE(decode(make(5, 4, {0, 4, 1})));        // a run first
  CHECK_FALSE(decode(make(5, 4, {1, 0, 1, 0, 2, 1})));  // two runs side by side
  CHECK_FALSE(decode(make(5, 4, {1, 0, 4})));        // a run reaching the last bucket
  CHECK_FALSE(decode(make(5, 4, {1, 0, 0, 1})));     // an empty run
  CHECK_FALSE(decode(make(5, 4, {1, 0, 2, 1})));     // covers 4 of 5 buckets, then truncated
  std::string wide;
  ByteWriter w(&wide);
  w.Varint(DDSketchStore::kMaxSpan + 1);
  w.Varint(0);
  for (int i = 0; i <= DDSketchStore::kMaxSpan; ++i) w.Varint(1);
  CHECK_FALSE(decode(wide));
}

// Intent: sparse stores encode empty buckets as runs (bytes per non-empty
// bucket, not per index) and round trip exactly.
TEST_CASE("ddsketch_store: empty buckets cost one run") {
  DDSketchStore s;
  s.Add(-200, 2);
  s.Add(300);
  s.Add(301, 5);
  const std::string bytes = EncodeOf(s);
  CHECK(bytes.size() < 16);  // 502 buckets of span, 3 of them non-empty
  DDSketchStore back;
  ByteReader r(bytes);
  REQUIRE(back.Decode(r));
  CHECK(r.at_end());
  CHECK(EncodeOf(back) == bytes);
  CHECK(back.CountAt(-200) == 2);
  CHECK(back.CountAt(0) == 0);
  CHECK(back.CountAt(301) == 5);
}

// Intent: merging a store straight from its encoding (MergeRun) gives the
// same store as decoding it and MergeFrom, with and without a fold.
TEST_CASE("ddsketch_store: MergeRun equals MergeFrom") {
  uint64_t x = 7;
  auto next = [&x] { return x = x * 6364136223846793005ULL + 1442695040888963407ULL, x >> 33; };
  for (int trial = 0; trial < 300; ++trial) {
    DDSketchStore mine, theirs;
    const bool wide = trial % 5 == 0;  // pushes the merged span past kMaxSpan
    for (int i = 0, n = static_cast<int>(next() % 30); i < n; ++i)
      mine.Add(static_cast<int32_t>(next() % 400) - 200, 1 + next() % 3);
    for (int i = 0, n = static_cast<int>(next() % 30); i < n; ++i)
      theirs.Add(static_cast<int32_t>(next() % 400) - 100, 1 + next() % 3);
    if (wide) theirs.Add(DDSketchStore::kMaxSpan + static_cast<int32_t>(next() % 300));
    const std::string encoded = EncodeOf(theirs);
    DDSketchStore expected = mine;
    DDSketchStore decoded;
    ByteReader r(encoded);
    REQUIRE(decoded.Decode(r));
    expected.MergeFrom(decoded);
    ByteReader r2(encoded);
    DDSketchStore::EncodedRun run;
    REQUIRE(DDSketchStore::ReadRun(r2, &run));
    CHECK(r2.at_end());
    mine.MergeRun(run);
    CHECK(EncodeOf(mine) == EncodeOf(expected));
    CHECK(mine.total() == expected.total());
  }
}

}  // namespace
}  // namespace fanfold
