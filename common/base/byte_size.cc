#include "common/base/byte_size.h"

#include <cstdio>

namespace fanfold {
namespace {

struct Unit {
  const char* name;
  uint64_t factor;
};

constexpr Unit kUnits[] = {
    {"B", 1},
    {"KiB", uint64_t{1} << 10},
    {"MiB", uint64_t{1} << 20},
    {"GiB", uint64_t{1} << 30},
    {"TiB", uint64_t{1} << 40},
    {"KB", 1000},
    {"MB", 1000'000},
    {"GB", 1000'000'000},
    {"TB", 1000'000'000'000},
};

}  // namespace

std::optional<uint64_t> ParseByteSize(std::string_view text) {
  size_t i = 0;
  uint64_t n = 0;
  while (i < text.size() && text[i] >= '0' && text[i] <= '9') {
    const uint64_t d = static_cast<uint64_t>(text[i] - '0');
    if (n > (UINT64_MAX - d) / 10) return std::nullopt;
    n = n * 10 + d;
    ++i;
  }
  if (i == 0) return std::nullopt;
  if (i < text.size() && text[i] == ' ') ++i;
  const std::string_view unit = text.substr(i);
  if (unit.empty()) return i == text.size() && text.back() != ' ' ? std::optional<uint64_t>(n) : std::nullopt;
  for (const Unit& u : kUnits) {
    if (unit != u.name) continue;
    if (n > UINT64_MAX / u.factor) return std::nullopt;
    return n * u.factor;
  }
  return std::nullopt;
}

std::string ByteSizeText(uint64_t bytes) {
  static constexpr const char* kNames[] = {"KiB", "MiB", "GiB", "TiB"};
  if (bytes < 1024) return std::to_string(bytes) + (bytes == 1 ? " byte" : " bytes");
  double v = static_cast<double>(bytes) / 1024;
  size_t u = 0;
  while (v >= 1024 && u + 1 < std::size(kNames)) {
    v /= 1024;
    ++u;
  }
  char buf[32];
  if (v == static_cast<double>(static_cast<uint64_t>(v))) std::snprintf(buf, sizeof buf, "%.0f %s", v, kNames[u]);
  else std::snprintf(buf, sizeof buf, "%.1f %s", v, kNames[u]);
  return buf;
}

}  // namespace fanfold
