// TimeZone: a handle on one zone of the system's IANA tz database (read
// through Howard Hinnant's tz library), or UTC when default-constructed.
// Handles are small values; the zone data they point to lives for the whole
// process. Built apart from the rest of common/ (it alone sees the tz
// library's headers and definitions), so it depends on nothing of fanfold's.
// Thread-safe: each thread keeps its own cache of the offset interval
// last used, so consecutive records of one zone cost a comparison.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

namespace fanfold {

class TimeZone {
 public:
  TimeZone() = default;  // UTC

  // Sets *zone to the zone called `name` exactly as the tz database spells
  // it ("Europe/Berlin"); returns false iff there is none.
  static bool Find(std::string_view name, TimeZone* zone);

  // The release of the tz database the zones come from ("2025b"), from the
  // library or else from the system's tzdata.zi; "unknown" iff neither
  // says, "" iff no database is readable.
  static std::string DatabaseVersion();

  // Every zone name of the database, sorted.
  static const std::vector<std::string>& Names();

  bool is_utc() const { return zone_ == nullptr; }

  // One stretch of time with a constant UTC offset: [begin, end) in epoch
  // seconds, local time = UTC + offset seconds.
  struct Span {
    int64_t begin;
    int64_t end;
    int32_t offset;
  };

  // The span holding epoch second s. The database's transitions end in
  // 2037; for 2038..2099 a zone still changing offsets in 2037 repeats the
  // offsets of the latest year up to 2037 whose calendar matches (same
  // weekday on March 1, or on January 1 for January and February); other
  // zones, and instants from 2100, keep the last transition's offset.
  Span SpanAt(int64_t s) const;

  // Local-time seconds (as if the zone were UTC) of epoch second s.
  int64_t Local(int64_t s) const { return s + SpanAt(s).offset; }

 private:
  const void* zone_ = nullptr;  // a date::time_zone of the process-wide database
};

}  // namespace fanfold
