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
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include <xxhash.h>
#include <zstd.h>

#include "common/byte_io.h"
#include "common/group_table.h"
#include "common/partial_codec.h"
#include "tests/fuzz/fuzz_measure_configs.h"

using namespace fanfold;

namespace {

const std::vector<MeasureConfig>& Configs() {
  static const auto* configs = new std::vector<MeasureConfig>(FuzzMeasureConfigs());
  return *configs;
}

// The header of common/partial_codec.h's layout in front of `stored`, with
// raw_len as the decompressed body length and the checksum computed as that
// header specifies (XXH3-64 of bytes [0, 120) followed by the stored body).
std::string WithHeader(std::string_view stored, uint64_t raw_len) {
  std::string out;
  ByteWriter w(&out);
  w.Bytes("FFPS");
  w.U16(kPartialFormatVersion);
  w.U16(kPartialHeaderSize);
  w.U64(0xF00D);  // fingerprint
  w.U32(3);       // shard index
  w.U32(0);       // flags
  for (int i = 0; i < 10; ++i) w.U64(i == 3 ? UINT64_MAX : 100 + i);  // identity and counts
  w.U64(raw_len);
  w.U64(stored.size());
  std::string covered = out + std::string(stored);
  w.U64(XXH3_64bits(covered.data(), covered.size()));
  w.Bytes(stored);
  return out;
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
    (void)g.MergeFrom(std::move(h));
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
