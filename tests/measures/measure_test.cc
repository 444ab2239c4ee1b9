// Properties every measure must have, checked through the factory for all
// kinds: split -> encode -> decode -> merge equals the whole input; encode
// round trips byte for byte; truncated or mutated encodings are rejected or
// decode to a usable state, never crash (this file is also run under
// -fsanitize=address,undefined; see docs/measures.md).
#include "common/measures/measure.h"

#include <doctest/doctest.h>

#include <cmath>

#include "common/measures/measure_registry.h"
#include "tests/measures/measure_test_util.h"

namespace fanfold {
namespace {

using testing::Rows;
using testing::TestLcg;

// Every registered kind: a new measure gets these properties checked
// without an edit here.
std::vector<MeasureKind> AllKinds() {
  std::vector<MeasureKind> kinds;
  for (const MeasureRow& row : MeasureRows()) kinds.push_back(row.kind);
  return kinds;
}

MeasureConfig ConfigFor(MeasureKind kind) {
  MeasureConfig c;
  c.kind = kind;
  c.probabilities = {0.1, 0.5, 0.99};
  c.precision = 10;
  c.k = 5;
  c.limit = 100000;
  // histogram: bins around the values MixedRows makes, 2^53 among the edges.
  c.edges = {-1000, -0.5, 0, 10, 1000, 9007199254740992.0, 9223372036854775808.0};
  return c;
}

// Floating-point measures whose merged result may differ from the whole in
// the last bits (the others must match exactly).
bool IsRounded(MeasureKind kind) {
  return kind == MeasureKind::kSum || kind == MeasureKind::kMean || kind == MeasureKind::kVariance ||
         kind == MeasureKind::kStddev;
}

// Every kind of Value, with an ordering key for at_lowest/at_highest.
Rows MixedRows(uint64_t seed, int n) {
  TestLcg g(seed);
  Rows rows;
  for (int i = 0; i < n; ++i) {
    Value key = g.Next() % 10 == 0 ? Value::Missing() : Value::Number(static_cast<double>(g.Next() % 500));
    switch (g.Next() % 10) {
      case 0: rows.Add(Value::Missing(), key); break;
      case 1: rows.Add(Value::Null(), key); break;
      case 2: rows.Add(Value::Bool(g.Next() % 2 == 0), key); break;
      case 3: rows.Add(Value::String(rows.Keep("w" + std::to_string(g.Next() % 300))), key); break;
      case 4: rows.Add(Value::String(rows.Keep(std::to_string((g.Uniform() - 0.3) * 100))), key); break;
      case 5: rows.Add(Value::Other(), key); break;
      // Exact integers, around 2^53 and over the whole int64 and uint64 ranges.
      case 6: rows.Add(Value::Int((int64_t{1} << 53) + static_cast<int64_t>(g.Next() % 5) - 2), key); break;
      case 7: rows.Add(Value::Int(static_cast<int64_t>((g.Next() << 33) ^ (g.Next() << 2) ^ g.Next())), key); break;
      case 8: rows.Add(Value::Uint(UINT64_MAX - g.Next() % 1000), key); break;
      default: rows.Add(Value::Number((g.Uniform() - 0.4) * 1e4), key); break;
    }
  }
  return rows;
}

void CheckCellsClose(const std::vector<Cell>& a, const std::vector<Cell>& b) {
  REQUIRE(a.size() == b.size());
  for (size_t i = 0; i < a.size(); ++i) {
    REQUIRE(a[i].kind == b[i].kind);
    if (a[i].kind == Cell::Kind::kFloat)
      CHECK(std::fabs(a[i].number - b[i].number) <= 1e-12 * std::max(1.0, std::fabs(b[i].number)));
  }
}

// Intent: the factory's argument and column counts match the kinds.
TEST_CASE("measure: factory shapes") {
  for (MeasureKind kind : AllKinds()) {
    const MeasureConfig c = ConfigFor(kind);
    REQUIRE(NewMeasureState(c) != nullptr);
    const bool quantile = kind == MeasureKind::kQuantile || kind == MeasureKind::kDdSketch;
    const size_t columns = quantile ? 3u : kind == MeasureKind::kHistogram ? c.edges.size() + 1 : 1u;
    CHECK(OutputColumnCount(c) == columns);
    CHECK(testing::FinalOf(*NewMeasureState(c)).size() == OutputColumnCount(c));
    const int args = kind == MeasureKind::kCount ? 0 : (kind == MeasureKind::kAtLowest || kind == MeasureKind::kAtHighest ? 2 : 1);
    CHECK(MeasureArgCount(kind) == args);
  }
}

// Intent: for every kind, merging the partial states of random splits (with
// encode/decode in between) equals processing the whole input: the same
// bytes for exact measures and sketches, the same result within 1e-12 for
// floating-point sums and moments; skipped() adds up too.
TEST_CASE("measure: split merge equals whole for every kind") {
  TestLcg rng(99);
  for (MeasureKind kind : AllKinds()) {
    INFO("kind " << static_cast<int>(kind));
    const MeasureConfig c = ConfigFor(kind);
    for (uint64_t seed : {1u, 2u, 3u}) {
      Rows rows = MixedRows(seed, 3000);
      auto whole = testing::Whole(c, rows);
      for (int shards : {1, 2, 5, 40}) {
        auto merged = testing::SplitMerged(c, rows, shards, rng);
        CHECK(merged->skipped() == whole->skipped());
        if (IsRounded(kind))
          CheckCellsClose(testing::FinalOf(*merged), testing::FinalOf(*whole));
        else
          CHECK(testing::EncodeOf(*merged) == testing::EncodeOf(*whole));
      }
    }
  }
}

// Intent: encode -> decode -> encode gives the same bytes, for empty and
// filled states of every kind, and decoding consumes exactly the encoding.
TEST_CASE("measure: encode round trip") {
  for (MeasureKind kind : AllKinds()) {
    INFO("kind " << static_cast<int>(kind));
    const MeasureConfig c = ConfigFor(kind);
    for (int n : {0, 1, 2, 50, 3000}) {
      const std::string bytes = testing::EncodeOf(*testing::Whole(c, MixedRows(7, n)));
      auto decoded = testing::DecodeOf(c, bytes);
      CHECK(testing::EncodeOf(*decoded) == bytes);
    }
  }
}

// Intent: merging straight from the encoded bytes (the coordinator's path)
// gives exactly the state that decoding then merging gives, for every kind,
// into empty and filled states; checking alone (apply false) changes
// nothing and consumes the same bytes.
TEST_CASE("measure: MergeEncoded equals Decode then Merge") {
  for (MeasureKind kind : AllKinds()) {
    INFO("kind " << static_cast<int>(kind));
    const MeasureConfig c = ConfigFor(kind);
    auto scratch = NewMeasureState(c);
    for (int earlier : {0, 1, 700}) {
      for (int later : {0, 1, 3, 900}) {
        const std::string mine = testing::EncodeOf(*testing::Whole(c, MixedRows(21, earlier)));
        const std::string theirs = testing::EncodeOf(*testing::Whole(c, MixedRows(22, later)));
        auto expected = testing::DecodeOf(c, mine);
        REQUIRE(expected->Merge(*testing::DecodeOf(c, theirs)).ok());

        auto state = testing::DecodeOf(c, mine);
        ByteReader check(theirs);
        REQUIRE(state->MergeEncoded(check, /*apply=*/false, scratch.get()).ok());
        CHECK(check.at_end());
        CHECK(testing::EncodeOf(*state) == mine);
        ByteReader apply(theirs);
        REQUIRE(state->MergeEncoded(apply, /*apply=*/true, scratch.get()).ok());
        CHECK(apply.at_end());
        CHECK(testing::EncodeOf(*state) == testing::EncodeOf(*expected));
      }
    }
  }
}

// Decodes bytes; if accepted, the state must re-encode to bytes that decode
// to the same encoding again, finalize, and merge both ways with a real state.
// MergeEncoded must accept exactly what Decode accepts, consume as much, and
// leave its target unchanged when it rejects.
void CheckDecodeIsSafe(const MeasureConfig& c, std::string_view bytes, const MeasureState& real) {
  auto s = NewMeasureState(c);
  ByteReader r(bytes);
  const Status st = s->Decode(r);
  const std::string before = testing::EncodeOf(real);
  auto target = testing::DecodeOf(c, before);
  auto scratch = NewMeasureState(c);
  ByteReader check(bytes), apply(bytes);
  const Status checked = target->MergeEncoded(check, /*apply=*/false, scratch.get());
  const Status applied = target->MergeEncoded(apply, /*apply=*/true, scratch.get());
  CHECK(checked.ok() == st.ok());
  if (st.ok()) {
    CHECK(check.remaining() == r.remaining());
    CHECK((applied.ok() || applied.code() == Status::Code::kLimitExceeded));
  } else if (applied.code() == Status::Code::kCorrupt) {
    CHECK(testing::EncodeOf(*target) == before);
  }
  if (!st.ok()) {
    CHECK(st.code() == Status::Code::kCorrupt);
    return;
  }
  const std::string again = testing::EncodeOf(*s);
  auto t = NewMeasureState(c);
  ByteReader r2(again);
  REQUIRE(t->Decode(r2).ok());
  CHECK(testing::EncodeOf(*t) == again);
  CHECK(testing::FinalOf(*s).size() == OutputColumnCount(c));
  const Status into = t->Merge(real);
  CHECK((into.ok() || into.code() == Status::Code::kLimitExceeded));
  auto u = testing::DecodeOf(c, testing::EncodeOf(real));
  const Status from = u->Merge(*s);
  CHECK((from.ok() || from.code() == Status::Code::kLimitExceeded));
  testing::FinalOf(*t);
  testing::FinalOf(*u);
}

// Intent: every strict prefix of a valid encoding is rejected as Corrupt
// (each encoding says how long it is); thousands of random mutations and
// random garbage are rejected or decode to a state that behaves.
TEST_CASE("measure: truncated and mutated encodings never crash") {
  TestLcg g(2024);
  for (MeasureKind kind : AllKinds()) {
    INFO("kind " << static_cast<int>(kind));
    const MeasureConfig c = ConfigFor(kind);
    auto real = testing::Whole(c, MixedRows(11, 400));
    for (int n : {0, 5, 400}) {
      const std::string bytes = testing::EncodeOf(*testing::Whole(c, MixedRows(5, n)));
      for (size_t len = 0; len < bytes.size(); ++len) {
        auto s = NewMeasureState(c);
        ByteReader r(std::string_view(bytes).substr(0, len));
        CHECK(s->Decode(r).code() == Status::Code::kCorrupt);
      }
      for (int trial = 0; trial < 1500; ++trial) {
        std::string m = bytes;
        const int edits = 1 + static_cast<int>(g.Next() % 4);
        for (int e = 0; e < edits; ++e) {
          const size_t at = m.empty() ? 0 : g.Next() % m.size();
          switch (g.Next() % 4) {
            case 0: if (!m.empty()) m[at] = static_cast<char>(m[at] ^ (1 << (g.Next() % 8))); break;
            case 1: if (!m.empty()) m[at] = static_cast<char>(g.Next()); break;
            case 2: m.insert(m.begin() + static_cast<ptrdiff_t>(at), static_cast<char>(g.Next())); break;
            default: if (!m.empty()) m.erase(at, 1 + g.Next() % 3); break;
          }
        }
        CheckDecodeIsSafe(c, m, *real);
      }
    }
    for (int trial = 0; trial < 500; ++trial) {
      std::string garbage(g.Next() % 64, '\0');
      for (char& ch : garbage) ch = static_cast<char>(g.Next());
      CheckDecodeIsSafe(c, garbage, *real);
    }
  }
}

}  // namespace
}  // namespace fanfold
