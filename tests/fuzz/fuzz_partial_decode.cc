// Fuzz target for the partial-state codec and every measure state's decoder.
// The first input byte picks a mode (low two bits); the rest is the payload:
//   0  the payload is a whole encoded partial state → DecodePartial;
//   1  the payload is the stored (zstd) body: a valid header with the right
//      lengths and XXH3 checksum is put in front, so decoding gets past the
//      checksum to the zstd frame checks;
//   2  the payload is the decompressed body: it is zstd-compressed and given
//      a valid header, so decoding reaches the samples and GroupTable::Decode;
//   3  the payload goes straight to NewMeasureState(c)->Decode for every
//      config of FuzzMeasureConfigs(), and to GroupTable::Decode.
// Whatever decodes must re-encode to bytes that decode to the same encoding.
#include <cstddef>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include <xxhash.h>
#include <zstd.h>

#include "common/base/byte_io.h"
#include "common/partial/group_table.h"
#include "common/partial/partial_codec.h"
#include "tests/fuzz/fuzz_measure_configs.h"

using namespace fanfold;

namespace {

const std::vector<MeasureConfig>& Configs() {
  static const auto* configs = new std::vector<MeasureConfig>(FuzzMeasureConfigs());
  return *configs;
}

// Offsets in the header of common/partial/partial_codec.h: the two body lengths, and
// the checksum in the header's last 8 bytes (XXH3-64 of the header bytes
// before it followed by the stored body).
constexpr size_t kRawLenOffset = 104;
constexpr size_t kStoredLenOffset = 112;
constexpr size_t kChecksumOffset = kPartialHeaderSize - 8;
constexpr uint64_t kFuzzMaxDeclaredBody = 64 << 20;

// Returns `header` (kPartialHeaderSize bytes) with its lengths and checksum
// rewritten for `stored`, followed by `stored`.
std::string Seal(std::string header, std::string_view stored, uint64_t raw_len) {
  const uint64_t stored_len = stored.size();
  std::memcpy(&header[kRawLenOffset], &raw_len, 8);
  std::memcpy(&header[kStoredLenOffset], &stored_len, 8);
  XXH3_state_t* st = XXH3_createState();
  XXH3_64bits_reset(st);
  XXH3_64bits_update(st, header.data(), kChecksumOffset);
  XXH3_64bits_update(st, stored.data(), stored.size());
  const uint64_t sum = XXH3_64bits_digest(st);
  XXH3_freeState(st);
  std::memcpy(&header[kChecksumOffset], &sum, 8);
  return header + std::string(stored);
}

// A valid header (from EncodePartial) in front of `stored`. The first call
// checks that Seal() reproduces EncodePartial's bytes exactly, so a change of
// the header layout stops the fuzzer instead of silently keeping it out of
// the body.
std::string WithHeader(std::string_view stored, uint64_t raw_len) {
  static const std::string header = [] {
    PartialState p(&Configs());
    p.header.fingerprint = 0xF00D;
    p.header.shard_index = 3;
    p.header.records = 5;
    p.samples.push_back({2, "unclosed string"});
    (void)p.reductions[0].groups.FindOrAdd("k");
    std::string e;
    EncodePartial(p, &e);
    uint64_t raw_len = 0;
    std::memcpy(&raw_len, &e[kRawLenOffset], 8);
    std::string h = e.substr(0, kPartialHeaderSize);
    if (Seal(h, std::string_view(e).substr(kPartialHeaderSize), raw_len) != e) {
      std::fprintf(stderr, "fuzz_partial_decode: partial-state header layout changed; update Seal()\n");
      std::abort();
    }
    return h;
  }();
  return Seal(header, stored, raw_len);
}

// Decodes bytes; if that works, checks encode → decode → encode is stable.
void DecodeAndRoundTrip(std::string_view bytes) {
  PartialState p(&Configs());
  if (!DecodePartial(bytes, &p).ok()) return;
  std::string a;
  EncodePartial(p, &a);
  PartialState q(&Configs());
  if (!DecodePartial(a, &q).ok()) __builtin_trap();
  std::string b;
  EncodePartial(q, &b);
  if (a != b) __builtin_trap();
}

void DecodeStates(std::string_view payload) {
  std::vector<Cell> cells;
  for (const MeasureConfig& c : Configs()) {
    std::unique_ptr<MeasureState> s = NewMeasureState(c);
    ByteReader r(payload);
    if (!s->Decode(r).ok()) continue;
    cells.clear();
    s->Finalize(&cells);
    std::string a;
    ByteWriter wa(&a);
    s->Encode(wa);
    std::unique_ptr<MeasureState> t = NewMeasureState(c);
    ByteReader ra(a);
    if (!t->Decode(ra).ok() || !ra.at_end()) __builtin_trap();
    std::string b;
    ByteWriter wb(&b);
    t->Encode(wb);
    if (a != b) __builtin_trap();
    if (s->Merge(*t).ok()) {  // may hit a bound: LimitExceeded is fine
      cells.clear();
      s->Finalize(&cells);
    }
  }
  GroupTable g(&Configs());
  ByteReader r(payload);
  if (g.Decode(r).ok()) {
    GroupTable h(&Configs());
    std::string a;
    ByteWriter wa(&a);
    g.Encode(wa);
    ByteReader ra(a);
    if (!h.Decode(ra).ok() || !ra.at_end()) __builtin_trap();
    // Our own encoding must pass the check, and merging it from the bytes
    // must fold in exactly what decoding it does.
    if (!g.CheckEncoded(a).ok()) __builtin_trap();
    (void)g.MergeEncoded(a);  // may hit a bound: LimitExceeded is fine
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  if (size == 0) return 0;
  std::string_view payload(reinterpret_cast<const char*>(data) + 1, size - 1);
  switch (data[0] & 3) {
    case 0: DecodeAndRoundTrip(payload); break;
    case 1: {
      unsigned long long n = ZSTD_getFrameContentSize(payload.data(), payload.size());
      uint64_t raw_len = (n == ZSTD_CONTENTSIZE_ERROR || n == ZSTD_CONTENTSIZE_UNKNOWN) ? payload.size() : n;
      // DecodePartial grows its buffer with real output, but zstd's RLE
      // blocks really can expand a few KiB into gigabytes; stay below the
      // fuzzer's memory limit.
      if (raw_len > kFuzzMaxDeclaredBody) return 0;
      DecodeAndRoundTrip(WithHeader(payload, raw_len));
      break;
    }
    case 2: {
      std::string z(ZSTD_compressBound(payload.size()), '\0');
      size_t zn = ZSTD_compress(z.data(), z.size(), payload.data(), payload.size(), 1);
      if (ZSTD_isError(zn)) __builtin_trap();
      z.resize(zn);
      DecodeAndRoundTrip(WithHeader(z, payload.size()));
      break;
    }
    case 3: DecodeStates(payload); break;
  }
  return 0;
}
