#include "common/partial/partial_codec.h"

#include <algorithm>
#include <cstring>

#include <xxhash.h>
#include <zstd.h>

#include "common/base/byte_io.h"

namespace fanfold {
namespace {

constexpr char kMagic[4] = {'F', 'F', 'P', 'S'};
constexpr uint32_t kFlagRawBody = 1;   // header flag: the body is stored uncompressed
constexpr size_t kRawBodyLimit = 4096;  // bodies smaller than this are stored raw
constexpr size_t kChecksumOffset = kPartialChecksumOffset;

uint64_t Checksum(std::string_view header_prefix, std::string_view body) {
  // One hashing state per thread: making one per call was a heap
  // allocation per partial, twice per tiny shard.
  struct State {
    XXH3_state_t* st = XXH3_createState();
    ~State() { XXH3_freeState(st); }
  };
  thread_local State state;
  XXH3_state_t* st = state.st;
  XXH3_64bits_reset(st);
  XXH3_64bits_update(st, header_prefix.data(), header_prefix.size());
  XXH3_64bits_update(st, body.data(), body.size());
  return XXH3_64bits_digest(st);
}

// One compression and one decompression context per thread, reused: making
// them per partial cost more than encoding a tiny shard's partial.
struct ZstdContexts {
  ZSTD_CCtx* c = ZSTD_createCCtx();
  ZSTD_DCtx* d = ZSTD_createDCtx();
  ~ZstdContexts() {
    ZSTD_freeCCtx(c);
    ZSTD_freeDCtx(d);
  }
};
ZstdContexts& Contexts() {
  thread_local ZstdContexts ctx;
  return ctx;
}

// Reads the malformed-record samples, the field and lookup counts and the
// reductions' kept counts from out->body, and points each reduction's groups
// at its group table inside it.
Status ReadSamples(OpenedPartial* out);

}  // namespace

uint64_t PathHash(std::string_view path) { return XXH3_64bits(path.data(), path.size()); }

namespace {

// The body's part before the reductions: samples, field and lookup counts,
// the reduction count.
void EncodeBodyPrefix(const PartialState& p, ByteWriter& bw) {
  bw.Varint(p.samples.size());
  for (const auto& s : p.samples) {
    bw.Varint(s.line);
    bw.Str(s.reason);
  }
  bw.Varint(p.field_present.size());
  for (uint64_t n : p.field_present) bw.Varint(n);
  bw.Varint(p.lookup_unmatched.size());
  for (uint64_t n : p.lookup_unmatched) bw.Varint(n);
  bw.Varint(p.reductions.size());
}

// EncodePartialBody's bytes written into *body while c compresses them into
// *frame. False (nothing compressed; the body is to be written again) when
// a reduction's length is not known beforehand, the body is shorter than
// BodyCompressor::kMinBytes, a table wrote other than its known length, or
// the compression did not finish.
bool EncodeBodyCompressing(const PartialState& p, std::string* body, BodyCompressor* c, std::string_view* frame) {
  body->clear();
  ByteWriter bw(body);
  EncodeBodyPrefix(p, bw);
  uint64_t total = body->size();
  for (const ReductionPartial& r : p.reductions) {
    if (r.encode_bytes_exact == 0 || !r.encode_groups) return false;
    total += VarintBytes(r.kept) + 8 + r.encode_bytes_exact;
  }
  if (total < BodyCompressor::kMinBytes) return false;
  // Room past the end for a table's last growth (WorkerGroupTable::Encode
  // grows by at most one group's bound past what it writes).
  constexpr size_t kSlackBytes = size_t{256} << 10;
  body->reserve(total + kSlackBytes);
  c->Begin(body->data(), total, body->capacity());
  const BodyProgress progress = [c](size_t final_bytes, size_t grow_to) { c->Progress(final_bytes, grow_to); };
  for (const ReductionPartial& r : p.reductions) {
    c->Progress(body->size(), body->size() + kMaxVarintBytes + 8);
    bw.Varint(r.kept);
    bw.U64(r.encode_bytes_exact);
    const size_t at = body->size();
    r.encode_groups(bw, progress);
    if (body->size() - at != r.encode_bytes_exact) {  // a bug: the length written is wrong
      c->Abandon();
      return false;
    }
  }
  c->Progress(body->size(), body->size());
  return c->Finish(frame);
}

}  // namespace

void EncodePartialBody(const PartialState& p, std::string* body) {
  body->clear();
  ByteWriter bw(body);
  EncodeBodyPrefix(p, bw);
  size_t hint = 0;
  for (const ReductionPartial& r : p.reductions) hint += r.encode_bytes_hint + 32;
  body->reserve(body->size() + hint);
  for (const ReductionPartial& r : p.reductions) {
    bw.Varint(r.kept);
    // The table's length is patched in after it is written in place: a
    // fixed-width field, so that the table need not be copied behind a varint.
    const size_t at = body->size();
    bw.U64(0);
    if (r.encode_groups)
      r.encode_groups(bw, BodyProgress());
    else
      r.groups.Encode(bw);
    const uint64_t length = body->size() - at - 8;
    std::memcpy(body->data() + at, &length, 8);
  }
}

void EncodePartial(const PartialState& p, std::string* out, BodyCompressor* compressor) {
  // The body and the compressed bytes go through buffers kept by the
  // thread from partial to partial: a many-group partial's (megabytes) were
  // allocated, page-faulted and zero-filled anew each time. Kept only up
  // to kKeepBytes each, so one huge partial does not pin its memory.
  constexpr size_t kKeepBytes = size_t{64} << 20;
  thread_local std::string body_buffer;
  thread_local std::string z_buffer;
  std::string& body = body_buffer;
  std::string_view z;
  const bool streamed = compressor != nullptr && EncodeBodyCompressing(p, &body, compressor, &z);
  if (!streamed) {
    EncodePartialBody(p, &body);
    z = body;
  }

  // A small body is stored as it is: compressing it and decompressing it
  // again cost more than its bytes (thousands of tiny shards).
  const bool raw = body.size() < kRawBodyLimit;
  if (!raw && !streamed) {
    const size_t bound = ZSTD_compressBound(body.size());
    if (z_buffer.size() < bound) z_buffer.resize(bound);  // never shrunk: no zero-fill next time
    const size_t zn = ZSTD_compressCCtx(Contexts().c, z_buffer.data(), bound, body.data(), body.size(), 1);
    z = std::string_view(z_buffer.data(), ZSTD_isError(zn) ? 0 : zn);  // compressBound makes an error impossible
  }
  struct Release {  // after the partial is written out
    std::string& body;
    std::string& z;
    ~Release() {
      if (body.capacity() > kKeepBytes) std::string().swap(body);
      if (z.capacity() > kKeepBytes) std::string().swap(z);
    }
  } release{body, z_buffer};

  const PartialHeader& h = p.header;
  out->clear();
  out->reserve(kPartialHeaderSize + z.size());
  ByteWriter w(out);
  w.Bytes(std::string_view(kMagic, 4));
  w.U16(kPartialFormatVersion);
  w.U16(kPartialHeaderSize);
  w.U64(h.fingerprint);
  w.U32(h.shard_index);
  w.U32(raw ? kFlagRawBody : 0);
  w.U64(h.file_size);
  w.I64(h.mtime_ns);
  w.U64(h.offset);
  w.U64(h.length);
  w.U64(h.path_hash);
  w.U64(h.records);
  w.U64(h.kept);
  w.U64(h.malformed);
  w.U64(h.raw_bytes);
  w.U64(h.compressed_bytes);
  w.U64(body.size());
  w.U64(z.size());
  w.U64(h.read_ns);
  w.U64(h.parse_ns);
  w.U64(h.aggregate_ns);
  w.U64(h.encode_ns);
  w.U64(Checksum(std::string_view(*out).substr(0, kChecksumOffset), z));
  w.Bytes(z);
}

void SetPartialEncodeTime(uint64_t ns, std::string* partial) {
  if (partial->size() < kPartialHeaderSize) return;
  std::memcpy(partial->data() + 144, &ns, 8);
  uint64_t sum = Checksum(std::string_view(*partial).substr(0, kChecksumOffset),
                          std::string_view(*partial).substr(kPartialHeaderSize));
  std::memcpy(partial->data() + kChecksumOffset, &sum, 8);
}

Status DecodePartialHeader(std::string_view bytes, PartialHeader* h, bool checksum_checked) {
  uint64_t raw_len = 0;
  uint64_t checksum = 0;
  FF_RETURN_IF_ERROR(DecodePartialHeaderOnly(bytes.substr(0, kPartialHeaderSize), bytes.size(), h, &raw_len, &checksum));
  if (!checksum_checked && Checksum(bytes.substr(0, kChecksumOffset), bytes.substr(kPartialHeaderSize)) != checksum)
    return Status::Corrupt("partial state checksum mismatch");
  return Status::Ok();
}

Status DecodePartialHeaderOnly(std::string_view head, uint64_t stored_size, PartialHeader* h, uint64_t* raw_len_out,
                               uint64_t* checksum_out) {
  const std::string_view bytes = head;
  if (stored_size < kPartialHeaderSize || head.size() < kPartialHeaderSize)
    return Status::Corrupt("partial state is " + std::to_string(stored_size) + " bytes; expected at least " +
                           std::to_string(kPartialHeaderSize));
  if (std::memcmp(bytes.data(), kMagic, 4) != 0) return Status::Corrupt("not a partial state (bad magic)");
  ByteReader r(bytes.substr(4));
  uint16_t version = r.U16();
  uint16_t header_size = r.U16();
  if (version != kPartialFormatVersion)
    return Status::Corrupt("partial state format version " + std::to_string(version) + "; this fanfold reads version " +
                           std::to_string(kPartialFormatVersion) + " only");
  if (header_size != kPartialHeaderSize) return Status::Corrupt("partial state header size mismatch");
  h->fingerprint = r.U64();
  h->shard_index = r.U32();
  h->flags = r.U32();
  h->file_size = r.U64();
  h->mtime_ns = r.I64();
  h->offset = r.U64();
  h->length = r.U64();
  h->path_hash = r.U64();
  h->records = r.U64();
  h->kept = r.U64();
  h->malformed = r.U64();
  h->raw_bytes = r.U64();
  h->compressed_bytes = r.U64();
  uint64_t raw_len = r.U64();
  uint64_t z_len = r.U64();
  h->read_ns = r.U64();
  h->parse_ns = r.U64();
  h->aggregate_ns = r.U64();
  h->encode_ns = r.U64();
  uint64_t checksum = r.U64();
  if (!r.ok()) return Status::Corrupt("partial state header is truncated");
  if (z_len != stored_size - kPartialHeaderSize)
    return Status::Corrupt("partial state body is " + std::to_string(stored_size - kPartialHeaderSize) +
                           " bytes; header says " + std::to_string(z_len));
  if (raw_len > kMaxPartialBodyBytes) return Status::Corrupt("partial state body length is implausible");
  if ((h->flags & ~kFlagRawBody) != 0) return Status::Corrupt("partial state has unknown flags");
  if ((h->flags & kFlagRawBody) != 0 && z_len != raw_len)
    return Status::Corrupt("partial state body is stored raw but its two lengths differ");
  *raw_len_out = raw_len;
  *checksum_out = checksum;
  return Status::Ok();
}

Status OpenPartial(std::string_view bytes, OpenedPartial* out, bool checksum_checked) {
  FF_RETURN_IF_ERROR(DecodePartialHeader(bytes, &out->header, checksum_checked));
  ByteReader lens(bytes.substr(104, 8));
  uint64_t raw_len = lens.U64();
  std::string_view z = bytes.substr(kPartialHeaderSize);
  std::string& body = out->body;
  if ((out->header.flags & kFlagRawBody) != 0) {
    body.assign(z);
    return ReadSamples(out);
  }
  unsigned long long frame = ZSTD_getFrameContentSize(z.data(), z.size());
  if (frame == ZSTD_CONTENTSIZE_ERROR || frame == ZSTD_CONTENTSIZE_UNKNOWN || frame != raw_len)
    return Status::Corrupt("partial state body is not the zstd frame its header describes");
  ZSTD_DCtx* d = Contexts().d;
  // A body whose claimed size is plausible for its compressed size is
  // decompressed in one call straight into its buffer: the coordinator's
  // merge does this for every partial, and streaming costs a copy of every
  // byte through zstd's window, plus the buffer's regrowth.
  constexpr uint64_t kOneShotRatio = 64;
  if (raw_len <= kOneShotRatio * z.size() + (uint64_t{1} << 20)) {
    // One frame and nothing after it (one call would read on into more).
    if (ZSTD_findFrameCompressedSize(z.data(), z.size()) != z.size())
      return Status::Corrupt("partial state body is not the length its header says");
    body.resize(raw_len);
    const size_t n = ZSTD_decompressDCtx(d, body.data(), body.size(), z.data(), z.size());
    if (ZSTD_isError(n))
      return Status::Corrupt(std::string("partial state body does not decompress: ") + ZSTD_getErrorName(n));
    if (n != raw_len) return Status::Corrupt("partial state body is not the length its header says");
    return ReadSamples(out);
  }
  // Otherwise as a stream into a buffer that grows with real output, so a
  // header that merely claims a huge body cannot make us allocate it.
  body.resize(std::min<uint64_t>(raw_len, uint64_t{1} << 20));
  ZSTD_DCtx_reset(d, ZSTD_reset_session_only);
  ZSTD_inBuffer in{z.data(), z.size(), 0};
  size_t produced = 0;
  for (;;) {
    if (produced == body.size()) {
      if (body.size() >= raw_len) break;
      body.resize(std::min<uint64_t>(raw_len, static_cast<uint64_t>(body.size()) * 2));
    }
    ZSTD_outBuffer out{body.data() + produced, body.size() - produced, 0};
    size_t ret = ZSTD_decompressStream(d, &out, &in);
    produced += out.pos;
    if (ZSTD_isError(ret))
      return Status::Corrupt(std::string("partial state body does not decompress: ") + ZSTD_getErrorName(ret));
    if (ret == 0) break;  // frame complete
    if (in.pos == in.size && out.pos < out.size) return Status::Corrupt("partial state body is truncated");
  }
  if (produced != raw_len || in.pos != in.size)
    return Status::Corrupt("partial state body is not the length its header says");
  body.resize(produced);
  return ReadSamples(out);
}

namespace {

Status ReadSamples(OpenedPartial* out) {
  const std::string& body = out->body;
  ByteReader r(body);
  uint64_t ns = r.Count(2);
  if (!r.ok() || ns > ReadStats::kMaxSamples) return Status::Corrupt("partial state has a bad sample count");
  out->samples.clear();
  for (uint64_t i = 0; i < ns; ++i) {
    MalformedSample s;
    s.line = r.Varint();
    s.reason = std::string(r.Str());
    if (!r.ok()) return Status::Corrupt("partial state samples are truncated");
    out->samples.push_back(std::move(s));
  }
  const uint64_t nf = r.Count(1);
  if (!r.ok()) return Status::Corrupt("partial state has a bad field count");
  out->field_present.clear();
  for (uint64_t i = 0; i < nf; ++i) out->field_present.push_back(r.Varint());
  if (!r.ok()) return Status::Corrupt("partial state field counts are truncated");
  const uint64_t nt = r.Count(1);
  if (!r.ok()) return Status::Corrupt("partial state has a bad lookup-table count");
  out->lookup_unmatched.clear();
  for (uint64_t i = 0; i < nt; ++i) out->lookup_unmatched.push_back(r.Varint());
  if (!r.ok()) return Status::Corrupt("partial state lookup counts are truncated");
  const uint64_t nr = r.Count(2);
  if (!r.ok() || nr == 0) return Status::Corrupt("partial state has a bad reduction count");
  out->reductions.clear();
  for (uint64_t i = 0; i < nr; ++i) {
    OpenedReduction red;
    red.kept = r.Varint();
    red.groups = r.Take(r.U64());
    if (!r.ok()) return Status::Corrupt("partial state reduction " + std::to_string(i) + " is truncated");
    out->reductions.push_back(red);
  }
  if (!r.at_end()) return Status::Corrupt("partial state body has trailing bytes");
  return Status::Ok();
}

}  // namespace

Status DecodePartial(std::string_view bytes, PartialState* out) {
  OpenedPartial opened;
  FF_RETURN_IF_ERROR(OpenPartial(bytes, &opened));
  if (opened.reductions.size() != out->reductions.size())
    return Status::Corrupt("partial state has " + std::to_string(opened.reductions.size()) + " reductions; expected " +
                           std::to_string(out->reductions.size()));
  for (size_t i = 0; i < opened.reductions.size(); ++i) {
    ByteReader r(opened.reductions[i].groups);
    FF_RETURN_IF_ERROR(out->reductions[i].groups.Decode(r));
    if (!r.at_end()) return Status::Corrupt("partial state group table has trailing bytes");
    out->reductions[i].kept = opened.reductions[i].kept;
  }
  out->header = opened.header;
  out->samples = std::move(opened.samples);
  out->field_present = std::move(opened.field_present);
  out->lookup_unmatched = std::move(opened.lookup_unmatched);
  return Status::Ok();
}

}  // namespace fanfold
