#include "common/measures/measure_options.h"

#include <cmath>
#include <cstdio>
#include <cstring>
#include <type_traits>

namespace fanfold {
namespace {

// The number of fields of an aggregate: the most initializers it accepts.
// A field added to MeasureConfig without a row in kMeasureOptions fails the
// static_assert below, so no option can miss the fingerprint.
struct AnyField {
  template <class T>
  operator T() const;  // never defined: only used in unevaluated checks
};

template <class T, class... Fields>
constexpr size_t FieldCount() {
  if constexpr (requires { T{Fields{}..., AnyField{}}; })
    return FieldCount<T, Fields..., AnyField>();
  else
    return sizeof...(Fields);
}

static_assert(FieldCount<MeasureConfig>() == 1 + kMeasureOptions.size(),
              "every MeasureConfig field but `kind` needs its row in kMeasureOptions");

std::string NumberText(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.17g", v);
  return buf;
}

// " key=value" for a scalar option; "" for an array, or an unset option
// whose text appears only when set.
std::string ScalarText(const MeasureOption& o, const MeasureConfig& c) {
  return std::visit(
      [&](auto field) -> std::string {
        using T = std::remove_cvref_t<decltype(c.*field)>;
        if constexpr (std::is_same_v<T, std::vector<double>>) return "";
        else if constexpr (std::is_same_v<T, double>) {
          if (o.text_only_when_set && std::isnan(c.*field)) return "";
          return std::string(" ") + o.key + "=" + NumberText(c.*field);
        }
        else return std::string(" ") + o.key + "=" + std::to_string(c.*field);
      },
      o.field);
}

// " key=v1,v2," for an array option; "" for a scalar.
std::string ArrayText(const MeasureOption& o, const MeasureConfig& c) {
  return std::visit(
      [&](auto field) -> std::string {
        using T = std::remove_cvref_t<decltype(c.*field)>;
        if constexpr (!std::is_same_v<T, std::vector<double>>) {
          return "";
        } else {
          if (o.text_only_when_set && (c.*field).empty()) return "";
          std::string out = std::string(" ") + o.key + "=";
          for (double v : c.*field) out += NumberText(v) + ",";
          return out;
        }
      },
      o.field);
}

}  // namespace

const MeasureOption* FindMeasureOption(const std::string& key) {
  for (const MeasureOption& o : kMeasureOptions)
    if (key == o.key) return &o;
  return nullptr;
}

std::string MeasureOptionsText(const MeasureConfig& config) {
  std::string out;
  for (const MeasureOption& o : kMeasureOptions) out += ScalarText(o, config);
  for (const MeasureOption& o : kMeasureOptions) out += ArrayText(o, config);
  return out;
}

}  // namespace fanfold
