#include "coordinator/cli/numeric_flag.h"

#include <algorithm>
#include <charconv>
#include <optional>

#include "common/base/number_text.h"

namespace fanfold {
namespace {

// The whole number text spells, iff from_chars reads all of it without
// overflow and it lies in [min, max].
std::optional<int64_t> ReadWhole(std::string_view text, int64_t min, int64_t max) {
  if (text.empty()) return std::nullopt;
  int64_t v = 0;
  const char* end = text.data() + text.size();
  auto [p, ec] = std::from_chars(text.data(), end, v);
  if (ec != std::errc() || p != end || v < min || v > max) return std::nullopt;
  return v;
}

std::string Number(double v) {
  char buf[kNumberTextMax];
  return std::string(FormatNumber(v, buf));
}

Status Refused(std::string_view name, const std::string& expected, std::string_view text) {
  return Status::InvalidArgument(std::string(name) + ": expected " + expected + ", found '" + std::string(text) +
                                 "'");
}

}  // namespace

std::string ExpectedText(const WholeFlag& flag) {
  return "a whole number from " + std::to_string(flag.min) + " to " + std::to_string(flag.max);
}

std::string ExpectedText(const SecondsFlag& flag) {
  if (flag.above_min) return "a number of seconds above " + Number(flag.min);
  return "a number of seconds from " + Number(flag.min) + " to " + Number(flag.max);
}

Result<int64_t> ParseWholeFlag(const WholeFlag& flag, std::string_view text) {
  std::optional<int64_t> v = ReadWhole(text, flag.min, flag.max);
  if (!v) return Refused(flag.name, ExpectedText(flag), text);
  return *v;
}

Result<double> ParseSecondsFlag(const SecondsFlag& flag, std::string_view text) {
  if (text.empty()) return Refused(flag.name, ExpectedText(flag), text);
  double v = 0;
  const char* end = text.data() + text.size();
  auto [p, ec] = std::from_chars(text.data(), end, v);
  // Written so that NaN fails every comparison and is refused.
  const bool above_floor = flag.above_min ? v > flag.min : v >= flag.min;
  if (ec != std::errc() || p != end || !above_floor || !(v <= flag.max))
    return Refused(flag.name, ExpectedText(flag), text);
  return v;
}

Result<std::vector<int64_t>> ParseWholeListFlag(const WholeFlag& flag, std::string_view text) {
  const std::string expected = "a comma-separated list of whole numbers from " + std::to_string(flag.min) + " to " +
                               std::to_string(flag.max);
  std::vector<int64_t> values;
  size_t pos = 0;
  while (pos <= text.size()) {
    const size_t comma = std::min(text.find(',', pos), text.size());
    const std::string_view item = text.substr(pos, comma - pos);
    std::optional<int64_t> v = ReadWhole(item, flag.min, flag.max);
    if (!v) {
      Status refused = Refused(flag.name, expected, item);
      if (item == text) return refused;
      return Status::InvalidArgument(refused.message() + " in '" + std::string(text) + "'");
    }
    if (std::find(values.begin(), values.end(), *v) != values.end())
      return Status::InvalidArgument(std::string(flag.name) + ": " + std::to_string(*v) + " is listed twice in '" +
                                     std::string(text) + "'");
    values.push_back(*v);
    pos = comma + 1;
  }
  std::sort(values.begin(), values.end());
  return values;
}

}  // namespace fanfold
