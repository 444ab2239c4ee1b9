#include "common/expr/time_zone.h"

#include <fstream>

#include <date/tz.h>

#include <algorithm>
#include <chrono>
#include <limits>

namespace fanfold {
namespace {

const date::time_zone* Zone(const void* p) { return static_cast<const date::time_zone*>(p); }

// Spans further than this from now are clamped: sys_info reaches far into
// the past and future, and seconds must stay within int64.
constexpr int64_t kFar = int64_t{1} << 50;

int64_t Seconds(date::sys_seconds s) {
  return std::clamp<int64_t>(s.time_since_epoch().count(), -kFar, kFar);
}

// One cached span per zone per thread, direct-mapped by the zone's address:
// records of one zone mostly fall in the span of the previous record.
struct CachedSpan {
  const void* zone = nullptr;
  TimeZone::Span span{0, 0, 0};
};
constexpr size_t kCacheSlots = 8;
thread_local CachedSpan t_cache[kCacheSlots];

// The system's TZif files list transitions up to 2037 only; beyond, a zone's
// rules live in a POSIX TZ footer this library version does not read. A rule
// such as "last Sunday of March" falls on the same wall date in two years
// whose March 1 falls on the same weekday (for the last day of February to
// the end of the year), or whose January 1 does (for January 1 to the day
// before). So an instant of 2038..2099 takes the offset of its twin in the
// latest such year up to 2037 (2027 or later: rules as they stand now), for
// zones still changing offsets in 2037.
constexpr int64_t kTwinsTo = 2145916800;     // 2038-01-01T00:00:00Z
constexpr int64_t kTwinsUntil = 4102444800;  // 2100-01-01T00:00:00Z

date::sys_days Day(int year, unsigned month) { return date::sys_days{date::year{year} / month / 1}; }
int64_t At(date::sys_days d) { return date::sys_seconds{d}.time_since_epoch().count(); }

TimeZone::Span Lookup(const date::time_zone* zone, int64_t s) {
  auto info_at = [zone](int64_t at) { return zone->get_info(date::sys_seconds{std::chrono::seconds{at}}); };
  const date::sys_info info = info_at(s);
  TimeZone::Span span{Seconds(info.begin), Seconds(info.end), static_cast<int32_t>(info.offset.count())};
  if (s < kTwinsTo || s >= kTwinsUntil || span.end < kTwinsUntil) return span;
  // Still changing in 2037: January and July differ (either hemisphere).
  if (info_at(kTwinsTo - 350 * 86400).offset == info_at(kTwinsTo - 170 * 86400).offset) return span;
  const date::sys_days day = std::chrono::floor<date::days>(date::sys_seconds{std::chrono::seconds{s}});
  const int year = static_cast<int>(date::year_month_day{day}.year());
  const date::sys_days spring = Day(year, 3) - date::days{1};  // last day of February
  const bool late = day >= spring;
  const unsigned month = late ? 3 : 1;
  int twin = 2037;
  while (date::weekday{Day(twin, month)} != date::weekday{Day(year, month)}) --twin;
  const int64_t shift = At(Day(year, month)) - At(Day(twin, month));
  const date::sys_info t = info_at(s - shift);
  // The twin's span, cut to the stretch of this year the twin stands for.
  const int64_t from = At(late ? spring : Day(year, 1)), to = At(late ? Day(year + 1, 1) : spring);
  return TimeZone::Span{std::max({span.begin, Seconds(t.begin) + shift, from}),
                        std::min(Seconds(t.end) + shift, to), static_cast<int32_t>(t.offset.count())};
}

}  // namespace

const std::vector<std::string>& TimeZone::Names() {
  static const std::vector<std::string> names = [] {
    std::vector<std::string> out;
    try {
      for (const date::time_zone& z : date::get_tzdb().zones) out.emplace_back(z.name());
    } catch (const std::exception&) {
      // No readable database: every name is unknown, which Find reports.
    }
    std::sort(out.begin(), out.end());
    out.erase(std::unique(out.begin(), out.end()), out.end());
    return out;
  }();
  return names;
}

std::string TimeZone::DatabaseVersion() {
  std::string version;
  try {
    version = date::get_tzdb().version;
  } catch (const std::exception&) {  // no readable database
    return "";
  }
  if (!version.empty() && version != "unknown") return version;
  // Built on the system's compiled zones, the library finds no release
  // (Debian installs no +VERSION file); tzdata's source file names it on its
  // first line: "# version 2025b".
  std::ifstream in("/usr/share/zoneinfo/tzdata.zi");
  std::string line;
  if (std::getline(in, line) && line.rfind("# version ", 0) == 0 && line.size() > 10) return line.substr(10);
  return version;
}

bool TimeZone::Find(std::string_view name, TimeZone* zone) {
  try {
    zone->zone_ = date::locate_zone(name);
  } catch (const std::exception&) {  // unknown name, or no readable database
    return false;
  }
  return zone->zone_ != nullptr;
}

TimeZone::Span TimeZone::SpanAt(int64_t s) const {
  if (zone_ == nullptr)
    return Span{std::numeric_limits<int64_t>::min(), std::numeric_limits<int64_t>::max(), 0};
  CachedSpan& c = t_cache[(reinterpret_cast<uintptr_t>(zone_) >> 4) % kCacheSlots];
  if (c.zone == zone_ && s >= c.span.begin && s < c.span.end) return c.span;
  c.zone = zone_;
  c.span = Lookup(Zone(zone_), s);
  return c.span;
}

}  // namespace fanfold
