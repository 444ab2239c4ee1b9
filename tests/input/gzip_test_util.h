// Test helper shared by the gzip tests: one gzip member (RFC 1952) of data,
// written by zlib's own deflate, so the readers are checked against zlib.
#pragma once

#include <zlib.h>

#include <string>

#include <doctest/doctest.h>

namespace fanfold {
namespace {

std::string GzipMember(const std::string& data) {
  z_stream s{};
  REQUIRE(deflateInit2(&s, 6, Z_DEFLATED, 15 + 16, 8, Z_DEFAULT_STRATEGY) == Z_OK);
  std::string out(deflateBound(&s, data.size()) + 32, '\0');
  s.next_in = reinterpret_cast<Bytef*>(const_cast<char*>(data.data()));
  s.avail_in = static_cast<uInt>(data.size());
  s.next_out = reinterpret_cast<Bytef*>(out.data());
  s.avail_out = static_cast<uInt>(out.size());
  REQUIRE(deflate(&s, Z_FINISH) == Z_STREAM_END);
  out.resize(s.total_out);
  deflateEnd(&s);
  return out;
}

}  // namespace
}  // namespace fanfold
