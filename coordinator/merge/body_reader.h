// BodyReader: a stored partial's body (docs/partial-state.md: after the
// 160-byte header, one zstd frame, or raw bytes when tiny) decoded in order
// into a window that grows only to hold what a caller asks for at once (a
// group of a table), reading the stored bytes 64 KiB at a time (pread on a
// file, so several readers may share one) and feeding every stored byte it
// reads to an optional XXH3 state. Checks that the frame decodes, ends with
// the stored bytes, and is the length the header says. The part of
// coordinator/merge/partial_stream that PartialGroupStream and
// ScanStoredPartial share; not thread-safe.
#pragma once

#include <xxhash.h>
#include <zstd.h>

#include <algorithm>
#include <cstdint>
#include <cstring>
#include <string>

#include "common/base/status.h"
#include "coordinator/merge/partial_stream.h"

namespace fanfold {

class BodyReader {
 public:
  BodyReader(const StoredPartialBytes* src, uint64_t stored, uint64_t raw_len, bool raw, XXH3_state_t* hash)
      : src_(src), stored_(stored), raw_len_(raw_len), raw_(raw), hash_(hash) {
    if (!raw_) {
      d_ = ZSTD_createDCtx();
      if (d_ == nullptr) status_ = Status::Internal("out of memory for a zstd stream");
      else ZSTD_DCtx_setParameter(d_, ZSTD_d_windowLogMax, PartialGroupStream::kWindowLogMax);
      in_.resize(PartialGroupStream::kReadStep);
    }
    out_.resize(2 * PartialGroupStream::kWindowStep);
  }
  ~BodyReader() { ZSTD_freeDCtx(d_); }

  const Status& status() const { return status_; }
  // The first failed read of the stored bytes (ok if none): an I/O error
  // names the file, and must not turn into a checksum mismatch.
  const Status& read_error() const { return read_error_; }
  const char* data() const { return out_.data() + beg_; }
  size_t avail() const { return end_ - beg_; }
  void Consume(size_t n) { beg_ += n; }

  // True iff at least n bytes are decoded and not consumed; false at the
  // end of the body or on a decoding error (status()).
  bool Ensure(size_t n) {
    while (end_ - beg_ < n) {
      if (!status_.ok() || ended_) return false;
      if (out_.size() - end_ < PartialGroupStream::kWindowStep) {
        if (beg_ > 0) {
          std::memmove(out_.data(), out_.data() + beg_, end_ - beg_);
          end_ -= beg_;
          beg_ = 0;
        }
        if (out_.size() - end_ < PartialGroupStream::kWindowStep)
          out_.resize(std::max(end_ + PartialGroupStream::kWindowStep, out_.size() + out_.size() / 2));
      }
      if (!More()) return false;
    }
    return true;
  }

  bool Varint(uint64_t* v) {
    size_t pos = 0;
    if (!VarintAt(&pos, v)) return false;
    Consume(pos);
    return true;
  }
  // A varint at data()[*pos], *pos moved past it.
  bool VarintAt(size_t* pos, uint64_t* v) {
    *v = 0;
    for (int shift = 0; shift < 64; shift += 7) {
      if (!Ensure(*pos + 1)) return false;
      const uint8_t b = static_cast<uint8_t>(data()[(*pos)++]);
      *v |= static_cast<uint64_t>(b & 0x7f) << shift;
      if ((b & 0x80) == 0) return true;
    }
    return false;
  }
  bool U64(uint64_t* v) {
    if (!Ensure(8)) return false;
    std::memcpy(v, data(), 8);
    Consume(8);
    return true;
  }
  bool Skip(uint64_t n) {
    while (n > 0) {
      if (avail() == 0 && !Ensure(1)) return false;
      const size_t k = static_cast<size_t>(std::min<uint64_t>(n, avail()));
      Consume(k);
      n -= k;
    }
    return true;
  }
  // Feeds the stored bytes not read yet to the hash, without decoding them.
  Status HashRest() {
    std::string chunk(PartialGroupStream::kReadStep, '\0');
    while (status_.ok() && read_ < stored_) {
      const size_t k = static_cast<size_t>(std::min<uint64_t>(chunk.size(), stored_ - read_));
      status_ = src_->ReadAt(kPartialHeaderSize + read_, k, chunk.data());
      if (!status_.ok()) read_error_ = status_;
      if (status_.ok() && hash_ != nullptr) XXH3_64bits_update(hash_, chunk.data(), k);
      read_ += k;
    }
    return status_;
  }

 private:
  // Reads the next stored bytes into `to` (at most `room`); 0 at the end.
  size_t ReadStored(char* to, size_t room) {
    const size_t k = static_cast<size_t>(std::min<uint64_t>(room, stored_ - read_));
    if (k == 0) return 0;
    status_ = src_->ReadAt(kPartialHeaderSize + read_, k, to);
    if (!status_.ok()) {
      read_error_ = status_;
      return 0;
    }
    if (hash_ != nullptr) XXH3_64bits_update(hash_, to, k);
    read_ += k;
    return k;
  }
  // Decodes more into out_[end_, ...); false at the end or on an error.
  bool More() {
    if (raw_) {
      const size_t k = ReadStored(out_.data() + end_, out_.size() - end_);
      end_ += k;
      if (k == 0) ended_ = true;
      return k > 0;
    }
    for (;;) {
      if (in_pos_ == in_len_ && read_ < stored_) {
        in_len_ = ReadStored(in_.data(), in_.size());
        in_pos_ = 0;
        if (!status_.ok()) return false;
      }
      ZSTD_inBuffer in{in_.data(), in_len_, in_pos_};
      ZSTD_outBuffer out{out_.data() + end_, out_.size() - end_, 0};
      const size_t ret = ZSTD_decompressStream(d_, &out, &in);
      in_pos_ = in.pos;
      end_ += out.pos;
      produced_ += out.pos;
      if (ZSTD_isError(ret)) {
        status_ = Status::Corrupt(std::string("partial state body does not decompress: ") + ZSTD_getErrorName(ret));
        return false;
      }
      if (produced_ > raw_len_) {
        status_ = Status::Corrupt("partial state body is not the length its header says");
        return false;
      }
      if (ret == 0) {  // the frame is whole: nothing may follow it
        ended_ = true;
        if (in_pos_ != in_len_ || read_ != stored_ || produced_ != raw_len_) {
          status_ = Status::Corrupt("partial state body is not the length its header says");
          return false;
        }
        return out.pos > 0;
      }
      if (out.pos > 0) return true;
      if (in_pos_ == in_len_ && read_ == stored_) {
        status_ = Status::Corrupt("partial state body is truncated");
        return false;
      }
    }
  }

  const StoredPartialBytes* src_;
  uint64_t stored_;
  uint64_t raw_len_;
  bool raw_;
  XXH3_state_t* hash_;
  ZSTD_DCtx* d_ = nullptr;
  std::string in_;
  size_t in_pos_ = 0;
  size_t in_len_ = 0;
  uint64_t read_ = 0;      // stored bytes read
  uint64_t produced_ = 0;  // body bytes decoded
  std::string out_;
  size_t beg_ = 0;
  size_t end_ = 0;
  bool ended_ = false;
  Status status_;
  Status read_error_;
};

}  // namespace fanfold
