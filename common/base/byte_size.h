// ByteSize: reading and showing a count of bytes as people write it —
// "1048576", "512MiB", "4GiB", "750MB" — for the memory cap (the CLI's
// --memory-cap and the job file's "memory_cap"). Binary units (KiB, MiB,
// GiB, TiB: powers of 1024, IEC 80000-13) and decimal ones (KB, MB, GB,
// TB: powers of 1000, SI) are accepted, a whole number before them, with
// an optional space. Stateless functions; thread-safe.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>

namespace fanfold {

// The byte count `text` stands for, or nothing when it is not one of the
// forms above or overflows 64 bits.
std::optional<uint64_t> ParseByteSize(std::string_view text);

// What ParseByteSize accepts, for "expected ..." in messages.
inline constexpr const char* kByteSizeExpected =
    "a whole number of bytes, or a whole number with a unit (KiB, MiB, GiB, TiB or KB, MB, GB, TB), e.g. \"512MiB\"";

// A short rendering for messages: "512 MiB", "1.5 GiB", "900 bytes".
std::string ByteSizeText(uint64_t bytes);

}  // namespace fanfold
