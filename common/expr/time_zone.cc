#include "common/expr/time_zone.h"

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
  const date::sys_info info = Zone(zone_)->get_info(date::sys_seconds{std::chrono::seconds{s}});
  c.zone = zone_;
  c.span = Span{Seconds(info.begin), Seconds(info.end), static_cast<int32_t>(info.offset.count())};
  return c.span;
}

}  // namespace fanfold
