#include "coordinator/merge/partial_stream.h"

#include <algorithm>
#include <cstring>
#include <xxhash.h>

#define ZSTD_STATIC_LINKING_ONLY  // ZSTD_estimateDStreamSize_fromFrame: exported by libzstd 1.5
#include <zstd.h>

#include "coordinator/merge/body_reader.h"
#include "coordinator/merge/encoded_group_cursor.h"

namespace fanfold {

std::unique_ptr<StoredPartialBytes> StoredPartialBytes::InMemory(std::string bytes) {
  std::unique_ptr<StoredPartialBytes> b(new StoredPartialBytes());
  b->length_ = bytes.size();
  b->bytes_ = std::move(bytes);
  return b;
}

std::unique_ptr<StoredPartialBytes> StoredPartialBytes::InFile(std::unique_ptr<ReadableFile> file, std::string path,
                                                               uint64_t offset, uint64_t length) {
  std::unique_ptr<StoredPartialBytes> b(new StoredPartialBytes());
  b->file_ = std::move(file);
  b->path_ = std::move(path);
  b->offset_ = offset;
  b->length_ = length;
  return b;
}

Status StoredPartialBytes::ReadAt(uint64_t offset, size_t n, char* buf) const {
  if (offset > length_ || n > length_ - offset) return Status::Corrupt("partial state is truncated");
  if (!file_) {
    std::memcpy(buf, bytes_.data() + offset, n);
    return Status::Ok();
  }
  OsError e = file_->ReadAt(offset_ + offset, n, buf);
  return e.ok() ? Status::Ok() : e.ToStatus("read", path_);
}

namespace {

// Reads and checks the header; *raw_len and *checksum as DecodePartialHeaderOnly's.
Status ReadHeader(const StoredPartialBytes& bytes, PartialHeader* h, uint64_t* raw_len, uint64_t* checksum,
                  std::string* head) {
  head->assign(kPartialHeaderSize, '\0');
  if (bytes.size() < kPartialHeaderSize)
    return Status::Corrupt("partial state is " + std::to_string(bytes.size()) + " bytes; expected at least " +
                           std::to_string(kPartialHeaderSize));
  FF_RETURN_IF_ERROR(bytes.ReadAt(0, kPartialHeaderSize, head->data()));
  return DecodePartialHeaderOnly(*head, bytes.size(), h, raw_len, checksum);
}

// The body's parts before the first reduction, read from r: samples, field
// and lookup counts into *info when not null; *reductions the reduction count.
Status ReadPrefix(BodyReader& r, OpenedPartial* info, uint64_t* reductions) {
  const auto bad = [&](const char* what) { return r.status().ok() ? Status::Corrupt(what) : r.status(); };
  uint64_t ns = 0;
  if (!r.Varint(&ns) || ns > ReadStats::kMaxSamples) return bad("partial state has a bad sample count");
  for (uint64_t i = 0; i < ns; ++i) {
    MalformedSample s;
    uint64_t len = 0;
    size_t pos = 0;
    if (!r.Varint(&s.line) || !r.VarintAt(&pos, &len) || !r.Ensure(pos + len))
      return bad("partial state samples are truncated");
    s.reason.assign(r.data() + pos, len);
    r.Consume(pos + len);
    if (info != nullptr) info->samples.push_back(std::move(s));
  }
  for (std::vector<uint64_t>* counts : {info ? &info->field_present : nullptr, info ? &info->lookup_unmatched : nullptr}) {
    uint64_t n = 0;
    if (!r.Varint(&n)) return bad("partial state has a bad field or lookup-table count");
    for (uint64_t i = 0; i < n; ++i) {
      uint64_t v = 0;
      if (!r.Varint(&v)) return bad("partial state field or lookup counts are truncated");
      if (counts != nullptr) counts->push_back(v);
    }
  }
  if (!r.Varint(reductions) || *reductions == 0) return bad("partial state has a bad reduction count");
  return Status::Ok();
}

}  // namespace

Status ScanStoredPartial(const StoredPartialBytes& bytes, const std::vector<size_t>& measure_counts,
                         bool checksum_checked, OpenedPartial* info, ScannedPartial* scanned) {
  std::string head;
  uint64_t raw_len = 0;
  uint64_t checksum = 0;
  FF_RETURN_IF_ERROR(ReadHeader(bytes, &info->header, &raw_len, &checksum, &head));
  const bool raw = (info->header.flags & kPartialRawBody) != 0;
  scanned->raw_bytes = raw_len;
  XXH3_state_t* hash = checksum_checked ? nullptr : XXH3_createState();
  if (hash != nullptr) {
    XXH3_64bits_reset(hash);
    XXH3_64bits_update(hash, head.data(), kPartialChecksumOffset);
  }
  struct Freed {
    XXH3_state_t* h;
    ~Freed() { XXH3_freeState(h); }
  } freed{hash};
  const uint64_t stored = bytes.size() - kPartialHeaderSize;
  // What one stream of it takes: zstd's stream for this frame's window,
  // the read buffer and the window's least size.
  scanned->stream_bytes = PartialGroupStream::kReadStep + 2 * PartialGroupStream::kWindowStep;
  if (!raw) {
    char frame[ZSTD_FRAMEHEADERSIZE_MAX] = {};
    const size_t k = static_cast<size_t>(std::min<uint64_t>(sizeof frame, stored));
    FF_RETURN_IF_ERROR(bytes.ReadAt(kPartialHeaderSize, k, frame));
    const size_t d = ZSTD_estimateDStreamSize_fromFrame(frame, k);
    if (!ZSTD_isError(d)) scanned->stream_bytes += d;
  }
  BodyReader r(&bytes, stored, raw_len, raw, hash);
  Status s = r.status();
  uint64_t nr = 0;
  if (s.ok()) s = ReadPrefix(r, info, &nr);
  if (s.ok() && nr != measure_counts.size())
    s = Status::Corrupt("partial state has " + std::to_string(nr) + " reductions; the plan has " +
                        std::to_string(measure_counts.size()));
  scanned->group_counts.clear();
  info->reductions.clear();
  for (size_t i = 0; i < measure_counts.size() && s.ok(); ++i) {
    OpenedReduction red;
    uint64_t len = 0;
    uint64_t groups = 0;
    size_t pos = 0;
    if (!r.Varint(&red.kept) || !r.U64(&len) || !r.VarintAt(&pos, &groups) || pos > len) {
      s = r.status().ok() ? Status::Corrupt("partial state reduction " + std::to_string(i) + " is truncated")
                          : r.status();
      break;
    }
    if (groups > (len - pos) / (1 + measure_counts[i])) {
      s = Status::Corrupt("partial state reduction " + std::to_string(i) + ": group count larger than the encoding");
      break;
    }
    info->reductions.push_back(red);
    scanned->group_counts.push_back(groups);
    if (i + 1 < measure_counts.size() && !r.Skip(len)) {
      s = r.status().ok() ? Status::Corrupt("partial state reduction " + std::to_string(i) + " is truncated")
                          : r.status();
    }
  }
  // The checksum comes first, as OpenPartial's: bad bytes are named as such.
  if (hash != nullptr) {
    Status read = r.HashRest();
    if (!read.ok() && !r.status().ok() && s.ok()) s = read;
    // A disk that fails to read is named as such, not as bad bytes.
    if (!r.read_error().ok() && r.read_error().code() != Status::Code::kCorrupt) return r.read_error();
    if (XXH3_64bits_digest(hash) != checksum) return Status::Corrupt("partial state checksum mismatch");
  }
  return s;
}

PartialGroupStream::PartialGroupStream(const StoredPartialBytes* bytes, size_t reduction, size_t measure_count)
    : m_(measure_count), states_(measure_count), at_(measure_count), lens_(measure_count) {
  PartialHeader h;
  uint64_t raw_len = 0;
  uint64_t checksum = 0;
  std::string head;
  if (Status s = ReadHeader(*bytes, &h, &raw_len, &checksum, &head); !s.ok()) {
    (void)Fail(s);
    return;
  }
  in_ = std::make_unique<BodyReader>(bytes, bytes->size() - kPartialHeaderSize, raw_len,
                                     (h.flags & kPartialRawBody) != 0, nullptr);
  BodyReader& r = *in_;
  const auto bad = [&](const std::string& what) { return r.status().ok() ? Status::Corrupt(what) : r.status(); };
  uint64_t nr = 0;
  Status s = r.status();
  if (s.ok()) s = ReadPrefix(r, nullptr, &nr);
  if (s.ok() && reduction >= nr) s = Status::Corrupt("partial state has no reduction " + std::to_string(reduction));
  for (size_t i = 0; i <= reduction && s.ok(); ++i) {
    uint64_t kept = 0;
    uint64_t len = 0;
    if (!r.Varint(&kept) || !r.U64(&len)) s = bad("partial state reduction " + std::to_string(i) + " is truncated");
    else if (i < reduction && !r.Skip(len)) s = bad("partial state reduction " + std::to_string(i) + " is truncated");
    else table_left_ = len;
  }
  if (!s.ok()) {
    (void)Fail(s);
    return;
  }
  size_t pos = 0;
  if (!r.VarintAt(&pos, &count_) || pos > table_left_ || count_ > (table_left_ - pos) / (1 + m_)) {
    (void)Fail(bad("group count larger than the encoding"));
    return;
  }
  r.Consume(pos);
  table_left_ -= pos;
}

PartialGroupStream::~PartialGroupStream() = default;

bool PartialGroupStream::Fail(const Status& s) {
  status_ = s;
  done_ = true;
  positioned_ = false;
  return false;
}

bool PartialGroupStream::Next() {
  if (done_) return false;
  BodyReader& r = *in_;
  if (positioned_) prev_key_.assign(key_);
  r.Consume(pending_);
  pending_ = 0;
  if (read_ == count_) {
    done_ = true;
    positioned_ = false;
    if (table_left_ != 0) return Fail("trailing bytes after the last group");
    return false;
  }
  const auto truncated = [&](const char* what) {
    return Fail(r.status().ok() ? Status::Corrupt("group " + std::to_string(read_) + ": truncated " + what)
                                : r.status());
  };
  size_t pos = 0;
  uint64_t len = 0;
  if (!r.VarintAt(&pos, &len) || len > table_left_ || pos + len > table_left_ || !r.Ensure(pos + len))
    return truncated("key");
  const size_t key_at = pos;
  const size_t key_len = static_cast<size_t>(len);
  pos += key_len;
  for (size_t j = 0; j < m_; ++j) {
    if (!r.VarintAt(&pos, &len) || len > table_left_ || pos + len > table_left_ || !r.Ensure(pos + len))
      return truncated("measure state");
    at_[j] = pos;
    lens_[j] = static_cast<size_t>(len);
    pos += lens_[j];
  }
  // Views only now: Ensure may have moved the window.
  key_ = std::string_view(r.data() + key_at, key_len);
  for (size_t j = 0; j < m_; ++j) states_[j] = std::string_view(r.data() + at_[j], lens_[j]);
  if (read_ > 0 && !EncodedGroupCursor::KeyLess(prev_key_, key_))
    return Fail("group " + std::to_string(read_) + ": keys not in strictly ascending order");
  table_left_ -= pos;
  pending_ = pos;
  ++read_;
  positioned_ = true;
  return true;
}

bool PartialGroupStream::SeekAtLeast(std::string_view key) { return SeekCursorAtLeast(*this, key); }

}  // namespace fanfold
