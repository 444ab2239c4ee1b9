#include "demo_data/gen/gen_compress.h"

#include <zlib.h>
#include <zstd.h>

namespace fanfold::gen {

std::string_view CompressionSuffix(GenCompression c) {
  switch (c) {
    case GenCompression::kZstd: return ".zst";
    case GenCompression::kGzip: return ".gz";
    case GenCompression::kNone: return "";
  }
  return "";
}

bool Compress(GenCompression c, std::string_view in, std::string* out, std::string* error) {
  if (c == GenCompression::kNone) {
    out->assign(in);
    return true;
  }
  if (c == GenCompression::kZstd) {
    out->resize(ZSTD_compressBound(in.size()));
    const size_t n = ZSTD_compress(out->data(), out->size(), in.data(), in.size(), 3);
    if (ZSTD_isError(n)) {
      *error = std::string("zstd: ") + ZSTD_getErrorName(n);
      return false;
    }
    out->resize(n);
    return true;
  }
  if (in.size() > 0xFFFFFFFFu) {
    *error = "zlib: a gzip shard must stay under 4 GiB uncompressed";
    return false;
  }
  z_stream zs{};
  // windowBits 15 + 16: a gzip wrapper with a zeroed header (no name, mtime 0).
  if (deflateInit2(&zs, 6, Z_DEFLATED, 15 + 16, 8, Z_DEFAULT_STRATEGY) != Z_OK) {
    *error = "zlib: deflateInit2 failed";
    return false;
  }
  out->resize(deflateBound(&zs, in.size()) + 32);
  zs.next_in = reinterpret_cast<Bytef*>(const_cast<char*>(in.data()));
  zs.avail_in = static_cast<uInt>(in.size());
  zs.next_out = reinterpret_cast<Bytef*>(out->data());
  zs.avail_out = static_cast<uInt>(out->size());
  const int rc = deflate(&zs, Z_FINISH);
  const size_t n = zs.total_out;
  deflateEnd(&zs);
  if (rc != Z_STREAM_END) {
    *error = "zlib: deflate did not finish (rc " + std::to_string(rc) + ")";
    return false;
  }
  out->resize(n);
  return true;
}

}  // namespace fanfold::gen
