#include "common/measures/histogram_bins.h"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdlib>

#include "common/base/number_text.h"

namespace fanfold {
namespace {

std::string Text(double x) {
  char buf[kNumberTextMax];
  return std::string(FormatNumber(x, buf));
}

// A decimal number m * 10^e.
struct Decimal {
  __int128 m = 0;
  int e = 0;
};

// The shortest decimal that reads back as finite x: std::to_chars's
// round-trip digits, which are what a job file holding x most likely wrote.
Decimal ShortestDecimal(double x) {
  char buf[64];
  auto [end, ec] = std::to_chars(buf, buf + sizeof buf, x, std::chars_format::scientific);
  (void)ec;  // 64 bytes hold any double
  const char* p = buf;
  const bool negative = *p == '-';
  if (negative) ++p;
  __int128 m = 0;
  int fraction_digits = 0;
  bool after_point = false;
  for (; p != end && *p != 'e'; ++p) {
    if (*p == '.') {
      after_point = true;
      continue;
    }
    m = m * 10 + (*p - '0');
    fraction_digits += after_point;
  }
  int exponent = 0;
  if (p != end) ++p;               // 'e'
  if (p != end && *p == '+') ++p;  // from_chars takes '-' but not '+'
  std::from_chars(p, end, exponent);
  return {negative ? -m : m, exponent - fraction_digits};
}

// 10^36: decimals are kept below it, so 257 steps of them fit __int128.
constexpr __int128 kDecimalBound = static_cast<__int128>(1'000'000'000'000'000'000ULL) * 1'000'000'000'000'000'000ULL;

// *m times 10^k (k >= 0); false iff that passes kDecimalBound.
bool ScaleUp(__int128* m, int k) {
  for (; k > 0; --k) {
    if (*m > kDecimalBound / 10 || *m < -kDecimalBound / 10) return false;
    *m *= 10;
  }
  return true;
}

// The double nearest to m * 10^e (std::from_chars rounds correctly).
double NearestDouble(__int128 m, int e) {
  std::string text;
  AppendWideInt(m, &text);
  text += "e" + std::to_string(e);
  double d = 0;
  std::from_chars(text.data(), text.data() + text.size(), d);
  return d;
}

struct Stepped {
  std::vector<double> edges;
  std::optional<OptionComplaint> bad;
};

Stepped TooManyBins(double approx) {
  return {{}, OptionComplaint{"width", "a width giving at most " + std::to_string(kMaxHistogramBins) +
                                           " bins (here about " + Text(std::round(approx)) + ")"}};
}

// REQUIRES: from, to and width are numbers (not NaN).
Stepped StepEdges(const MeasureConfig& c) {
  if (!(c.width > 0)) return {{}, OptionComplaint{"width", "a bin width above 0"}};
  if (!(c.to > c.from)) return {{}, OptionComplaint{"to", "a number above \"from\" (" + Text(c.from) + ")"}};
  const double approx = (c.to - c.from) / c.width;  // +inf when to - from overflows
  if (!(approx <= static_cast<double>(kMaxHistogramBins) + 0.5)) return TooManyBins(approx);
  Decimal f = ShortestDecimal(c.from), t = ShortestDecimal(c.to), w = ShortestDecimal(c.width);
  const int e = std::min({f.e, t.e, w.e});
  if (!ScaleUp(&f.m, f.e - e) || !ScaleUp(&t.m, t.e - e) || !ScaleUp(&w.m, w.e - e))
    return {{}, OptionComplaint{"width", "a width, \"from\" and \"to\" whose decimal digits span at most 36 "
                                         "places together (or the bins as \"edges\")"}};
  const __int128 span = t.m - f.m;
  if (span % w.m != 0)
    return {{}, OptionComplaint{"width", "a width that divides to - from (" + Text(c.to - c.from) +
                                             ") into whole bins (here " + Text(approx) + " bins)"}};
  const __int128 n = span / w.m;
  if (n < 1 || n > static_cast<__int128>(kMaxHistogramBins)) return TooManyBins(approx);
  Stepped out;
  for (__int128 i = 0; i < n; ++i) out.edges.push_back(NearestDouble(f.m + i * w.m, e));
  out.edges.push_back(c.to);
  for (size_t i = 1; i < out.edges.size(); ++i) {
    if (out.edges[i] > out.edges[i - 1]) continue;
    out.bad = OptionComplaint{"width", "a width the doubles near \"from\" can tell apart (edges " +
                                           std::to_string(i - 1) + " and " + std::to_string(i) + " are both " +
                                           Text(out.edges[i]) + ")"};
    out.edges.clear();
    break;
  }
  return out;
}

// The first of the stepped options config sets, or nullptr.
const char* FirstSteppedKey(const MeasureConfig& c) {
  if (!std::isnan(c.from)) return "from";
  if (!std::isnan(c.to)) return "to";
  if (!std::isnan(c.width)) return "width";
  return nullptr;
}

}  // namespace

std::vector<double> HistogramEdges(const MeasureConfig& config) {
  if (CheckHistogramBins(config)) return {};
  if (!config.edges.empty()) return config.edges;
  return StepEdges(config).edges;
}

std::optional<OptionComplaint> CheckHistogramBins(const MeasureConfig& c) {
  const char* stepped = FirstSteppedKey(c);
  if (!c.edges.empty()) {
    if (stepped != nullptr)
      return OptionComplaint{stepped, std::string("no \"") + stepped +
                                          "\" beside \"edges\": the bins come from \"edges\", or from \"from\", "
                                          "\"to\" and \"width\""};
    if (c.edges.size() < 2) return OptionComplaint{"edges", "at least 2 edges (one bin)"};
    for (size_t i = 1; i < c.edges.size(); ++i) {
      if (!(c.edges[i] > c.edges[i - 1]))
        return OptionComplaint{"edges", "a number above the edge before it (" + Text(c.edges[i - 1]) + ")",
                               static_cast<int>(i)};
    }
    return std::nullopt;
  }
  if (stepped == nullptr)
    return OptionComplaint{"edges", "the bins: \"edges\" (2 to 257 increasing numbers), or \"from\", \"to\" "
                                    "and \"width\""};
  for (const char* key : {"from", "to", "width"}) {
    const double v = key[0] == 'f' ? c.from : key[0] == 't' ? c.to : c.width;
    if (std::isnan(v))
      return OptionComplaint{key, std::string("\"") + key + "\" too: bins by width need \"from\", \"to\" and \"width\""};
  }
  return StepEdges(c).bad;
}

std::vector<std::string> HistogramColumns(const std::string& name, const MeasureConfig& config) {
  const std::vector<double> edges = HistogramEdges(config);
  std::vector<std::string> out;
  out.push_back(name + "_below");
  for (size_t i = 0; i + 1 < edges.size(); ++i) out.push_back(name + "_" + Text(edges[i]) + "_" + Text(edges[i + 1]));
  out.push_back(name + "_above");
  return out;
}

}  // namespace fanfold
