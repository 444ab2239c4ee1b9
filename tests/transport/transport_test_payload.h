// The bytes the transport test worker returns for a shard, shared by the
// worker (tests/transport/transport_test_worker.cc) and the tests that check them.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>

namespace fanfold {

// n bytes that depend on the shard index and the position, so a partial
// delivered for the wrong shard or truncated is caught.
inline std::string TestPayload(uint32_t index, size_t n) {
  std::string s(n, '\0');
  for (size_t i = 0; i < n; ++i) s[i] = static_cast<char>((index * 131u + i * 7u + (i >> 8)) & 0xff);
  return s;
}

}  // namespace fanfold
