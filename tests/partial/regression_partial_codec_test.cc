// Regression tests for problems the fuzzers found in the partial-state codec
// (tests/fuzz/fuzz_partial_decode.cc, mode 1).
#include <doctest/doctest.h>

#include <sys/resource.h>

#include <cstdint>
#include <cstring>
#include <string>
#include <string_view>
#include <vector>

#include <xxhash.h>

#include "common/partial/partial_codec.h"

using namespace fanfold;

namespace {

// Peak resident set size of this process so far, in KiB (getrusage(2)).
long PeakRssKib() {
  rusage u{};
  getrusage(RUSAGE_SELF, &u);
  return u.ru_maxrss;
}

// A valid partial-state header (from EncodePartial) in front of `stored`,
// with the flags (offset 20), the body lengths (offsets 104 and 112) and the checksum (last 8
// header bytes: XXH3-64 of the header before it, then the stored body)
// rewritten as common/partial/partial_codec.h specifies.
std::string Sealed(std::string_view stored, uint64_t raw_len) {
  std::vector<MeasureConfig> none;
  PartialState p(&none);
  std::string h;
  EncodePartial(p, &h);
  h.resize(kPartialHeaderSize);
  const uint64_t stored_len = stored.size();
  const uint32_t flags = 0;  // a zstd body (an empty partial is small enough to be stored raw)
  std::memcpy(&h[20], &flags, 4);
  std::memcpy(&h[104], &raw_len, 8);
  std::memcpy(&h[112], &stored_len, 8);
  std::string covered = h.substr(0, kPartialHeaderSize - 8) + std::string(stored);
  const uint64_t sum = XXH3_64bits(covered.data(), covered.size());
  std::memcpy(&h[kPartialHeaderSize - 8], &sum, 8);
  return h + std::string(stored);
}

}  // namespace

// Intent: a 16-byte zstd frame whose header claims 1 GiB of content (and a
// partial header that agrees, with a valid checksum) is rejected without
// allocating that much. DecodePartial used to allocate and zero-fill the
// declared length (up to kMaxPartialBodyBytes = 16 GiB) before it
// decompressed anything; it now grows its buffer with the real output.
TEST_CASE("regression: partial state declaring a huge body") {
  const uint64_t claimed = uint64_t{1} << 30;
  std::string frame("\x28\xb5\x2f\xfd\xe0", 5);  // magic; single segment, 8-byte content size
  frame.append(reinterpret_cast<const char*>(&claimed), 8);
  frame.append("\x01\x00\x00", 3);  // last block, raw, 0 bytes
  const std::string bytes = Sealed(frame, claimed);
  std::vector<MeasureConfig> none;
  PartialState p(&none);
  REQUIRE(DecodePartialHeader(bytes, &p.header).ok());  // it does get past the checksum
  const long before = PeakRssKib();
  CHECK_FALSE(DecodePartial(bytes, &p).ok());
  CHECK(PeakRssKib() - before < 256 * 1024);  // less than 256 MiB more than before
}
