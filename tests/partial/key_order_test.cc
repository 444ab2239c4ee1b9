// KeyOrder against the C++ standard library: the indexes it returns name the
// keys in std::string_view order (char_traits<char>::compare, which compares
// bytes as unsigned char, as memcmp does), for small tables (sorted by
// comparisons) and big ones (radix-sorted windows), keys sharing long
// prefixes, prefixes of each other, zero and 0xFF bytes.
#include <doctest/doctest.h>

#include <algorithm>
#include <random>
#include <string>
#include <string_view>
#include <vector>

#include "common/partial/key_order.h"

using namespace fanfold;

namespace {

std::vector<std::string> MakeKeys(size_t n, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::vector<std::string> keys;
  std::vector<std::string> seen;
  while (keys.size() < n) {
    std::string k;
    switch (rng() % 5) {
      case 0: k = "\x04\x0cT-00" + std::to_string(rng() % 100000000); break;  // a shared prefix
      case 1: k = std::string(rng() % 20, '\0') + static_cast<char>(rng() % 256); break;
      case 2: k = std::string(rng() % 12, '\xFF'); break;
      case 3: k = "2026-03-01T" + std::to_string(rng() % 1000) + std::string(rng() % 3, '\0'); break;
      default:
        for (size_t i = 0, len = rng() % 30; i < len; ++i) k.push_back(static_cast<char>(rng() % 256));
    }
    keys.push_back(std::move(k));
  }
  std::sort(keys.begin(), keys.end());
  keys.erase(std::unique(keys.begin(), keys.end()), keys.end());  // KeyOrder wants distinct keys
  std::shuffle(keys.begin(), keys.end(), rng);
  return keys;
}

}  // namespace

TEST_CASE("key order: the standard library's string_view order, small and radix-sized tables") {
  // 70,000 and 200,000: ranges sorted by 16-bit digits, at the first window
  // and (the shared-prefix keys) again at the second.
  for (size_t n : {size_t{0}, size_t{1}, size_t{7}, size_t{2047}, size_t{2048}, size_t{5000}, size_t{60000},
                   size_t{70000}, size_t{200000}}) {
    CAPTURE(n);
    const std::vector<std::string> keys = MakeKeys(n, static_cast<unsigned>(n) + 3);
    std::vector<std::string_view> views(keys.begin(), keys.end());
    const std::vector<uint32_t> order = KeyOrder(views);
    REQUIRE(order.size() == views.size());
    std::vector<std::string_view> got;
    for (uint32_t i : order) got.push_back(views[i]);
    std::vector<std::string_view> want = views;
    std::sort(want.begin(), want.end());
    CHECK(got == want);
  }
}

// Intent: keys that all share their first bytes (a tag, a length and a fixed
// start of an identifier; KeyOrder starts its windows past them) still come
// out in std::string_view order — with the shared prefix itself as a key,
// keys ending inside the first window, keys shorter than 8 bytes, and keys
// running on for several windows.
TEST_CASE("key order: keys sharing a prefix, the prefix itself among them") {
  for (const std::string& prefix : {std::string("\x04\x0cT-000"), std::string("ab"), std::string()}) {
    for (size_t n : {size_t{50}, size_t{3000}, size_t{100000}}) {
      CAPTURE(prefix.size());
      CAPTURE(n);
      std::mt19937_64 rng(n + prefix.size());
      std::vector<std::string> keys{prefix};
      for (size_t i = 0; i < n; ++i) {
        std::string k = prefix;
        const size_t tail = rng() % 4 == 0 ? rng() % 20 : 5 + rng() % 3;
        for (size_t j = 0; j < tail; ++j) k.push_back(rng() % 8 == 0 ? '\0' : static_cast<char>('0' + rng() % 10));
        keys.push_back(std::move(k));
      }
      std::sort(keys.begin(), keys.end());
      keys.erase(std::unique(keys.begin(), keys.end()), keys.end());
      std::shuffle(keys.begin(), keys.end(), rng);
      std::vector<std::string_view> views(keys.begin(), keys.end());
      const std::vector<uint32_t> order = KeyOrder(views);
      REQUIRE(order.size() == views.size());
      std::vector<std::string_view> got;
      for (uint32_t i : order) got.push_back(views[i]);
      std::vector<std::string_view> want = views;
      std::sort(want.begin(), want.end());
      CHECK(got == want);
    }
  }
}

// Intent: sorted a stretch at a time (large tables: dealt into buckets by
// their first two bytes past the shared prefix), every prefix handed out is
// final — the standard library's order's own first entries — and the
// stretches add up to the whole order.
TEST_CASE("key order: stretches are prefixes of the standard library's order") {
  for (size_t n : {size_t{0}, size_t{5}, size_t{40000}, size_t{200000}}) {
    CAPTURE(n);
    const std::vector<std::string> keys = MakeKeys(n, static_cast<unsigned>(n) + 11);
    std::vector<std::string_view> views(keys.begin(), keys.end());
    std::vector<std::string_view> want = views;
    std::sort(want.begin(), want.end());
    KeyOrderStretches stretches(views);
    size_t calls = 0;
    size_t last = 0;
    bool prefixes_ok = true;
    while (stretches.Next()) {
      ++calls;
      REQUIRE(stretches.sorted() > last);
      for (size_t i = last; i < stretches.sorted(); ++i) prefixes_ok = prefixes_ok && views[stretches.ids()[i]] == want[i];
      last = stretches.sorted();
    }
    CHECK(prefixes_ok);
    CHECK(last == views.size());  // MakeKeys drops repeats: fewer than n
    if (n >= 200000) CHECK(calls > 1);
  }
}
