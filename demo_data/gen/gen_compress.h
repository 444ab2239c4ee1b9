// GenCompress: one-shot compression of a generated shard — zstd frames via
// libzstd, gzip members via zlib (no file name, mtime 0), so the output bytes
// depend only on the input and the library versions. Thread-safe.
#pragma once

#include <string>
#include <string_view>

namespace fanfold::gen {

enum class GenCompression { kNone, kZstd, kGzip };

// Replaces *out with the compressed form of `in`. Returns false (and sets
// *error) if the library reports a failure.
bool Compress(GenCompression c, std::string_view in, std::string* out, std::string* error);

// ".zst", ".gz" or "".
std::string_view CompressionSuffix(GenCompression c);

}  // namespace fanfold::gen
