// ShardText: writes a shard's LampEvents as NDJSON, CSV or TSV text, breaking
// the lines marked malformed in a way every strict reader must reject
// (truncated objects, a missing opening brace, garbage bytes; for CSV/TSV a
// wrong number of fields). Pure functions of their inputs; thread-safe.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "demo_data/gen/lamp_world.h"

namespace fanfold::gen {

enum class TextFormat { kNdjson, kCsv, kTsv };

struct ShardCounts {
  uint64_t records = 0;    // well-formed records written
  uint64_t malformed = 0;  // broken lines written
};

// The CSV/TSV header row, nested fields flattened (fw_version, reading_0, ...).
std::string_view CsvColumns();

// Appends the shard's text (header row first for CSV/TSV) to *out. NDJSON
// writes an event's tag after "lamp" when it has one; lean (NDJSON only)
// writes only the lamp, the tag and a numeric power reading.
ShardCounts FormatShard(const LampWorld& world, const std::vector<LampEvent>& events,
                        TextFormat format, bool lean, std::string* out);

// ISO 8601 text of an instant: "2026-03-01T00:17:03.250Z", or local time
// with the given offset (minutes east of UTC), e.g. "...T01:17:03.250+01:00".
void AppendIsoTime(int64_t t_ms, int offset_minutes, bool utc_z, std::string* out);

// Epoch milliseconds of "YYYY-MM-DDTHH" (UTC); false on bad text.
bool ParseHour(std::string_view text, int64_t* t_ms);

}  // namespace fanfold::gen
