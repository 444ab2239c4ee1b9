// PartialCodec: the on-wire and on-disk form of one shard's partial state —
// what a worker returns and what the run directory persists. Layout (all
// integers little-endian), specified here and in docs/partial-state.md:
//
//   off size field
//     0    4 magic "FFPS"
//     4    2 format version (kPartialFormatVersion)
//     6    2 header size (kPartialHeaderSize)
//     8    8 plan fingerprint
//    16    4 shard index
//    20    4 flags: bit 0 = body stored raw (not zstd), others 0
//    24    8 shard file size        32  8 shard mtime (ns since epoch)
//    40    8 chunk offset           48  8 chunk length (UINT64_MAX = whole file)
//    56    8 XXH3-64 of the shard's absolute path
//    64    8 records read           72  8 records kept (passed the filter)
//    80    8 records malformed      88  8 decompressed bytes
//    96    8 compressed bytes read 104  8 body length before compression
//   112    8 body length as stored (zstd-compressed, or raw under flag bit 0)
//   120    8 ns reading + decompressing   128  8 ns parsing records
//   136    8 ns filtering + aggregating   144  8 ns encoding the body
//   152    8 checksum: XXH3-64 of bytes [0, 152) followed by the stored body
//   160      body: one zstd frame (raw bytes if under 4 KiB) of
//              varint sample count, per sample: varint line, string reason;
//              varint raw-field count, per raw field of the plan (FieldTable
//              order): varint records in which it had a value;
//              varint lookup-table count, per table of the plan (job-file
//              order): varint records whose match found no row;
//              varint reduction count, per reduction of the plan (in job
//              order): varint records it kept (past the job's filter and
//              its own), u64 length + that many bytes of its GroupTable
//              encoding (common/partial/group_table.h)
//
// Decoding checks every length against the input and the checksum before
// decompressing, so corrupt or hostile bytes give Status::Corrupt, never a
// crash. Pure functions; thread-safe.
#pragma once

#include <cstdint>
#include <functional>
#include <string>
#include <string_view>
#include <vector>

#include "common/partial/body_compressor.h"
#include "common/partial/group_table.h"
#include "common/input/record_reader.h"
#include "common/base/format_version.h"
#include "common/base/status.h"

namespace fanfold {

inline constexpr uint16_t kPartialHeaderSize = 160;
inline constexpr uint64_t kMaxPartialBodyBytes = uint64_t{1} << 34;  // 16 GiB decompressed

struct PartialHeader {
  uint64_t fingerprint = 0;
  uint32_t shard_index = 0;
  uint32_t flags = 0;  // read only: EncodePartial chooses (bit 0: body stored raw)
  uint64_t file_size = 0;
  int64_t mtime_ns = 0;
  uint64_t offset = 0;
  uint64_t length = UINT64_MAX;
  uint64_t path_hash = 0;
  uint64_t records = 0;
  uint64_t kept = 0;
  uint64_t malformed = 0;
  uint64_t raw_bytes = 0;
  uint64_t compressed_bytes = 0;
  // Where the worker's time went (wall-clock ns, measured by the worker).
  uint64_t read_ns = 0;
  uint64_t parse_ns = 0;
  uint64_t aggregate_ns = 0;
  uint64_t encode_ns = 0;
};

// One reduction's part of a shard's partial state.
struct ReductionPartial {
  uint64_t kept = 0;  // records past the job's filter and the reduction's own
  GroupTable groups;
  // Set by a worker: writes its own table's encoding (WorkerGroupTable::
  // Encode, the same layout) in place of `groups`'s, reporting its progress
  // to the BodyProgress when that is set (see body_compressor.h).
  std::function<void(ByteWriter&, const BodyProgress&)> encode_groups;
  // About how many bytes encode_groups writes (0 = unknown): the body is
  // reserved once instead of growing by doubling, which copies it.
  size_t encode_bytes_hint = 0;
  // Exactly how many bytes encode_groups writes, when known before it
  // writes them (0 = not known): the body can then be compressed while it
  // is written (EncodePartial with a BodyCompressor).
  uint64_t encode_bytes_exact = 0;
  explicit ReductionPartial(const std::vector<MeasureConfig>* configs) : groups(configs) {}
};

struct PartialState {
  PartialHeader header;
  std::vector<MalformedSample> samples;
  // Per raw field of the plan, in FieldTable order: the well-formed records
  // in which the field had a value (null included; an empty CSV cell has
  // none). The run's end warns about a field no record had.
  std::vector<uint64_t> field_present;
  // Per lookup table of the plan, in job-file order: the well-formed
  // records whose match value found no row (common/job/lookup_plan.h).
  std::vector<uint64_t> lookup_unmatched;
  std::vector<ReductionPartial> reductions;  // one per reduction of the plan, in order
  // One reduction per configs entry (each the measure configs of one
  // reduction, outliving the state).
  explicit PartialState(const std::vector<const std::vector<MeasureConfig>*>& configs) {
    reductions.reserve(configs.size());
    for (const std::vector<MeasureConfig>* c : configs) reductions.emplace_back(c);
  }
  // A state of one reduction.
  explicit PartialState(const std::vector<MeasureConfig>* configs) { reductions.emplace_back(configs); }
};

// XXH3-64 of a shard path, as stored in the header.
uint64_t PathHash(std::string_view path);

// Encodes p into *out (replacing its contents). zstd level 1: partials are
// written once and read once, so speed beats ratio. With a compressor, a
// body of at least BodyCompressor::kMinBytes whose reductions all know
// their exact bytes (encode_bytes_exact) is compressed on its helper thread
// while it is written; the bytes are the same either way.
void EncodePartial(const PartialState& p, std::string* out, BodyCompressor* compressor = nullptr);

// The body alone, before compression (samples, field counts, lookup
// counts, then each reduction's kept count and group table).
void EncodePartialBody(const PartialState& p, std::string* body);

// Rewrites the encode-time field of an encoded partial (and its checksum):
// the time to encode is only known once encoding is done.
void SetPartialEncodeTime(uint64_t ns, std::string* partial);

// Reads only the fixed header (checksum verified against the whole input).
// With checksum_checked (the caller checked these very bytes before, e.g.
// when it received them), everything but the checksum is checked again.
Status DecodePartialHeader(std::string_view bytes, PartialHeader* out, bool checksum_checked = false);

// The header alone, for a partial read as a stream (coordinator/merge/
// partial_stream.h): `head` is its first kPartialHeaderSize bytes of
// `stored_size`. Every check of DecodePartialHeader but the checksum, which
// is returned in *checksum (XXH3-64 of bytes [0, kPartialChecksumOffset)
// followed by the stored body), with the body's length before compression
// in *raw_len; flags bit 0 (h->flags & kPartialRawBody) says it is stored raw.
inline constexpr size_t kPartialChecksumOffset = 152;
inline constexpr uint32_t kPartialRawBody = 1;
Status DecodePartialHeaderOnly(std::string_view head, uint64_t stored_size, PartialHeader* h, uint64_t* raw_len,
                               uint64_t* checksum);

// One reduction of an opened partial: `groups` views its GroupTable
// encoding inside OpenedPartial::body.
struct OpenedReduction {
  uint64_t kept = 0;
  std::string_view groups;
};

// A partial state with its header and samples read and its body checked
// and decompressed; each reduction's `groups` views its GroupTable encoding
// inside `body`, for GroupTable::CheckEncoded / MergeEncoded (not checked
// here). Neither copied nor moved, since the views point into `body`.
struct OpenedPartial {
  OpenedPartial() = default;
  OpenedPartial(const OpenedPartial&) = delete;
  OpenedPartial& operator=(const OpenedPartial&) = delete;
  PartialHeader header;
  std::vector<MalformedSample> samples;
  std::vector<uint64_t> field_present;  // as PartialState::field_present
  std::vector<uint64_t> lookup_unmatched;  // as PartialState::lookup_unmatched
  std::string body;
  std::vector<OpenedReduction> reductions;
};
// checksum_checked as for DecodePartialHeader.
Status OpenPartial(std::string_view bytes, OpenedPartial* out, bool checksum_checked = false);

// Decodes bytes into *out, whose group tables must be empty and built with
// the plan's measure configs (one per reduction; a partial of another
// reduction count is corrupt).
Status DecodePartial(std::string_view bytes, PartialState* out);

}  // namespace fanfold
