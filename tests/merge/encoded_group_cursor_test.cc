// EncodedGroupCursor: walks a GroupTable encoding key by key with each
// measure's state bytes, and rejects what the format forbids.
#include "coordinator/merge/encoded_group_cursor.h"

#include <doctest/doctest.h>

#include <random>
#include <string>
#include <vector>

#include "common/partial/group_key.h"
#include "common/partial/group_table.h"

namespace fanfold {
namespace {

std::string KeyOf(double g) {
  std::string key;
  AppendKeyValue(Value::Number(g), &key);
  return key;
}

std::vector<MeasureConfig> Configs() {
  std::vector<MeasureConfig> c(2);
  c[0].kind = MeasureKind::kCount;
  c[1].kind = MeasureKind::kSum;
  return c;
}

std::string Encoded(const std::vector<MeasureConfig>& configs, const std::vector<double>& keys) {
  GroupTable t(&configs);
  for (double k : keys) {
    const Value v = Value::Number(k * 2);
    MeasureState* const* s = t.FindOrAdd(KeyOf(k));
    for (size_t m = 0; m < configs.size(); ++m) s[m]->Add(&v);
  }
  std::string out;
  ByteWriter w(&out);
  t.Encode(w);
  return out;
}

// Intent: the cursor yields the table's groups in ascending key order with
// the bytes each state encodes to, then ends cleanly; SeekAtLeast lands on
// the first key not below its argument.
TEST_CASE("encoded_group_cursor: walks groups in key order with their state bytes") {
  const auto configs = Configs();
  const std::string bytes = Encoded(configs, {30, 10, 20, 40});
  EncodedGroupCursor c(bytes, 2);
  CHECK(c.group_count() == 4);
  std::vector<std::string> keys;
  while (c.Next()) {
    keys.emplace_back(c.key());
    GroupTable one(&configs);
    std::string enc;
    ByteWriter w(&enc);
    w.Varint(1);
    w.Str(c.key());
    w.Str(c.state(0));
    w.Str(c.state(1));
    ByteReader r(enc);
    REQUIRE(one.Decode(r).ok());  // the bytes are whole states
  }
  CHECK(c.status().ok());
  CHECK(keys == std::vector<std::string>{KeyOf(10), KeyOf(20), KeyOf(30), KeyOf(40)});
  CHECK_FALSE(c.Next());

  EncodedGroupCursor s(bytes, 2);
  REQUIRE(s.SeekAtLeast(KeyOf(25)));
  CHECK(s.key() == KeyOf(30));
  CHECK(s.SeekAtLeast(KeyOf(30)));  // already there
  CHECK(s.key() == KeyOf(30));
  CHECK_FALSE(s.SeekAtLeast(KeyOf(41)));
  CHECK(s.status().ok());
}

// Intent: KeyLess orders keys as the C++ standard's std::string_view
// operator< does (char_traits<char>::compare: unsigned bytes, then the
// shorter first), on keys of 0-40 bytes sharing prefixes, bytes >= 0x80
// and NUL included; and group_bytes() is each group's framing exactly
// (the groups' bytes concatenated are the encoding after its count).
TEST_CASE("encoded_group_cursor: KeyLess is string_view's order; group_bytes is the framing") {
  std::mt19937_64 rng(7);
  const std::string alphabet("\x00\x01a\x7f\x80\xff", 6);
  std::vector<std::string> keys;
  for (int i = 0; i < 400; ++i) {
    std::string k(rng() % 41, 'x');
    for (char& ch : k) ch = alphabet[rng() % alphabet.size()];
    keys.push_back(k);
    if (!k.empty()) keys.push_back(k.substr(0, k.size() - 1));  // a prefix of it
  }
  for (const std::string& a : keys)
    for (const std::string& b : keys)
      REQUIRE(EncodedGroupCursor::KeyLess(a, b) == (std::string_view(a) < std::string_view(b)));

  const auto configs = Configs();
  const std::string bytes = Encoded(configs, {3, 1, 2, 400, -5});
  EncodedGroupCursor c(bytes, 2);
  const size_t head = 1;  // the count, 5, is one varint byte
  std::string joined;
  while (c.Next()) joined += c.group_bytes();
  CHECK(c.status().ok());
  CHECK(joined == bytes.substr(head));
}

// Intent: a count past the bytes, a truncated group, keys out of order or
// repeated, and trailing bytes each end the walk with Corrupt.
TEST_CASE("encoded_group_cursor: rejects malformed framing") {
  const auto configs = Configs();
  const std::string good = Encoded(configs, {1, 2, 3});
  const auto walk = [](const std::string& b) {
    EncodedGroupCursor c(b, 2);
    while (c.Next()) {
    }
    return c.status().code();
  };
  CHECK(walk(good) == Status::Code::kOk);
  CHECK(walk(good.substr(0, good.size() - 1)) == Status::Code::kCorrupt);
  CHECK(walk(good + '\x01') == Status::Code::kCorrupt);
  std::string big = good;
  big[0] = '\x7f';  // 127 groups in a few bytes
  CHECK(walk(big) == Status::Code::kCorrupt);
  // Two groups written twice in the same order: 1, 2, 1, 2.
  const std::string one_two = Encoded(configs, {1, 2});
  std::string twice = one_two;
  twice[0] = 4;
  twice += one_two.substr(1);
  CHECK(walk(twice) == Status::Code::kCorrupt);
}

}  // namespace
}  // namespace fanfold
