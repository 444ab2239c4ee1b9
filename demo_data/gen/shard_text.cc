#include "demo_data/gen/shard_text.h"

#include <charconv>
#include <cstdio>

#include "common/base/cell_text.h"

namespace fanfold::gen {
namespace {

constexpr int kCsvFieldCount = 12;

// Proleptic Gregorian calendar <-> days since 1970-01-01 (H. Hinnant's
// public-domain "days_from_civil" / "civil_from_days" algorithms).
int64_t DaysFromCivil(int64_t y, unsigned m, unsigned d) {
  y -= m <= 2;
  const int64_t era = (y >= 0 ? y : y - 399) / 400;
  const unsigned yoe = static_cast<unsigned>(y - era * 400);
  const unsigned doy = (153 * (m > 2 ? m - 3 : m + 9) + 2) / 5 + d - 1;
  const unsigned doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
  return era * 146097 + static_cast<int64_t>(doe) - 719468;
}

void CivilFromDays(int64_t z, int64_t* y, unsigned* m, unsigned* d) {
  z += 719468;
  const int64_t era = (z >= 0 ? z : z - 146096) / 146097;
  const unsigned doe = static_cast<unsigned>(z - era * 146097);
  const unsigned yoe = (doe - doe / 1460 + doe / 36524 - doe / 146096) / 365;
  const unsigned doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
  const unsigned mp = (5 * doy + 2) / 153;
  *d = doy - (153 * mp + 2) / 5 + 1;
  *m = mp < 10 ? mp + 3 : mp - 9;
  *y = static_cast<int64_t>(yoe) + era * 400 + (*m <= 2);
}

int64_t FloorDiv(int64_t a, int64_t b) { return a / b - ((a % b != 0) && ((a < 0) != (b < 0))); }

void AppendInt(int64_t v, std::string* out) {
  char buf[24];
  auto r = std::to_chars(buf, buf + sizeof buf, v);
  out->append(buf, r.ptr);
}

// value / 10^decimals, trailing zeros of the fraction kept iff keep_zeros.
void AppendScaled(int64_t v, int decimals, bool keep_zeros, std::string* out) {
  if (v < 0) {
    out->push_back('-');
    v = -v;
  }
  int64_t scale = 1;
  for (int i = 0; i < decimals; ++i) scale *= 10;
  AppendInt(v / scale, out);
  int64_t frac = v % scale;
  int digits = decimals;
  if (!keep_zeros) {
    while (digits > 0 && frac % 10 == 0) {
      frac /= 10;
      --digits;
    }
  }
  if (digits == 0) return;
  char buf[8];
  for (int i = digits - 1; i >= 0; --i) {
    buf[i] = static_cast<char>('0' + frac % 10);
    frac /= 10;
  }
  out->push_back('.');
  out->append(buf, digits);
}

void AppendPower(const LampEvent& e, std::string* out) { AppendScaled(e.power_tenths, 1, true, out); }
void AppendLatency(const LampEvent& e, std::string* out) { AppendScaled(e.latency_hundredths, 2, false, out); }

void AppendTime(const LampEvent& e, std::string* out) {
  switch (e.time_style) {
    case TimeStyle::kPlusOne: AppendIsoTime(e.t_ms, 60, false, out); break;
    case TimeStyle::kMinusThreeThirty: AppendIsoTime(e.t_ms, -210, false, out); break;
    default: AppendIsoTime(e.t_ms, 0, true, out); break;
  }
}

void AppendJsonString(std::string_view s, std::string* out) {
  out->push_back('"');
  for (char c : s) {
    if (c == '"' || c == '\\') out->push_back('\\');
    out->push_back(c);
  }
  out->push_back('"');
}

void AppendTag(const LampEvent& e, std::string* out) {
  char buf[32];
  const int n = std::snprintf(buf, sizeof buf, ",\"tag\":\"T-%010llu\"", static_cast<unsigned long long>(e.tag));
  out->append(buf, static_cast<size_t>(n));
}

// A lean record: the lamp, its tag (when tags are on) and the power reading
// when it is a number — about 55 bytes, for benchmarks of many records.
void WriteLeanJson(const LampWorld& w, const LampEvent& e, std::string* out) {
  out->append("{\"lamp\":");
  AppendJsonString(w.LampId(e.lamp), out);
  if (e.tag != kNoTag) AppendTag(e, out);
  if (e.power_style == PowerStyle::kNumber) {
    out->append(",\"power_w\":");
    AppendPower(e, out);
  }
  out->push_back('}');
}

void WriteJson(const LampWorld& w, const LampEvent& e, bool lean, std::string* out) {
  if (lean) return WriteLeanJson(w, e, out);
  if (e.time_style == TimeStyle::kEpochMs) {
    out->append("{\"ts_ms\":");
    AppendInt(e.t_ms, out);
  } else {
    out->append("{\"ts\":\"");
    AppendTime(e, out);
    out->push_back('"');
  }
  out->append(",\"lamp\":");
  AppendJsonString(w.LampId(e.lamp), out);
  if (e.tag != kNoTag) AppendTag(e, out);
  out->append(",\"district\":");
  AppendJsonString(w.District(e.lamp), out);
  out->append(",\"event\":");
  AppendJsonString(EventName(e.kind), out);
  switch (e.power_style) {
    case PowerStyle::kNumber: out->append(",\"power_w\":"); AppendPower(e, out); break;
    case PowerStyle::kMissing: break;
    case PowerStyle::kNull: out->append(",\"power_w\":null"); break;
    case PowerStyle::kNumericText:
      out->append(",\"power_w\":\"");
      AppendPower(e, out);
      out->push_back('"');
      break;
    case PowerStyle::kJunkText: out->append(",\"power_w\":\"n/a\""); break;
  }
  if (e.has_latency) {
    out->append(",\"latency_ms\":");
    AppendLatency(e, out);
  }
  out->append(",\"fw\":{\"version\":");
  AppendJsonString(LampWorld::FirmwareName(e.firmware), out);
  out->append(",\"channel\":");
  AppendJsonString(w.Channel(e.lamp), out);
  out->push_back('}');
  if (e.reading_count <= 2) {
    out->append(",\"readings\":[");
    if (e.reading_count >= 1) AppendScaled(e.temp_tenths, 1, true, out);
    if (e.reading_count >= 2) {
      out->push_back(',');
      AppendInt(e.humidity, out);
    }
    out->push_back(']');
  }
  if (e.fault_style == FaultStyle::kCode) {
    out->append(",\"fault\":");
    AppendJsonString(LampWorld::FaultName(e.fault_code), out);
  } else if (e.fault_style == FaultStyle::kNull) {
    out->append(",\"fault\":null");
  }
  out->push_back('}');
}

// Bytes that can start no JSON text, then a run of printable ASCII and
// high bytes (never a line break).
void AppendGarbage(uint64_t bits, bool for_csv, std::string* out) {
  out->push_back('#');
  const int n = 8 + static_cast<int>(bits % 53);
  uint64_t s = bits;
  for (int i = 0; i < n; ++i) {
    s = s * 6364136223846793005ull + 1442695040888963407ull;
    unsigned char c = static_cast<unsigned char>(s >> 56);
    if (for_csv) {
      c = static_cast<unsigned char>('a' + c % 26);  // no separators or quotes
    } else if (c < 0x21 || c == 0x7F) {
      c = static_cast<unsigned char>(c + 0x40);
    }
    out->push_back(static_cast<char>(c));
  }
}

void WriteBrokenJson(const LampWorld& w, const LampEvent& e, bool lean, std::string* out) {
  const uint64_t kind = e.corruption % 10;
  const uint64_t bits = e.corruption >> 8;
  if (kind >= 7) return AppendGarbage(bits, false, out);
  std::string line;
  WriteJson(w, e, lean, &line);
  if (kind >= 4) {
    out->append(line, 1, std::string::npos);  // the opening brace lost
  } else {
    // A proper prefix of an object (at least "{\"") is never valid JSON.
    const size_t cut = 2 + bits % (line.size() - 2);
    out->append(line, 0, cut);
  }
}

// The cells of one record, in CsvColumns() order.
void CsvCells(const LampWorld& w, const LampEvent& e, std::string cells[kCsvFieldCount]) {
  for (int i = 0; i < kCsvFieldCount; ++i) cells[i].clear();
  if (e.time_style == TimeStyle::kEpochMs) {
    AppendInt(e.t_ms, &cells[1]);
  } else {
    AppendTime(e, &cells[0]);
  }
  cells[2] = w.LampId(e.lamp);
  cells[3] = w.District(e.lamp);
  cells[4] = EventName(e.kind);
  if (e.power_style == PowerStyle::kNumber || e.power_style == PowerStyle::kNumericText) {
    AppendPower(e, &cells[5]);
  } else if (e.power_style == PowerStyle::kJunkText) {
    cells[5] = "n/a";
  }
  if (e.has_latency) AppendLatency(e, &cells[6]);
  cells[7] = LampWorld::FirmwareName(e.firmware);
  cells[8] = w.Channel(e.lamp);
  if (e.reading_count >= 1 && e.reading_count <= 2) AppendScaled(e.temp_tenths, 1, true, &cells[9]);
  if (e.reading_count == 2) AppendInt(e.humidity, &cells[10]);
  if (e.fault_style == FaultStyle::kCode) cells[11] = LampWorld::FaultName(e.fault_code);
}

void WriteCsvRow(const LampWorld& w, const LampEvent& e, char sep, std::string cells[], std::string* out) {
  CsvCells(w, e, cells);
  int fields = kCsvFieldCount;
  int extra = 0;
  if (e.malformed) {
    const uint64_t kind = e.corruption % 4;
    const uint64_t bits = e.corruption >> 8;
    if (kind == 3) return AppendGarbage(bits, true, out);
    if (kind == 2) {
      extra = 1 + static_cast<int>(bits % 3);
    } else {
      // 2 .. 11 fields: ts or ts_ms is always non-empty, so never a blank line.
      fields = 2 + static_cast<int>(bits % (kCsvFieldCount - 2));
    }
  }
  for (int i = 0; i < fields; ++i) {
    if (i > 0) out->push_back(sep);
    AppendCsvField(cells[i], sep, out);
  }
  for (int i = 0; i < extra; ++i) {
    out->push_back(sep);
    out->append("spare");
  }
}

}  // namespace

std::string_view CsvColumns() {
  return "ts,ts_ms,lamp,district,event,power_w,latency_ms,fw_version,fw_channel,reading_0,reading_1,fault";
}

void AppendIsoTime(int64_t t_ms, int offset_minutes, bool utc_z, std::string* out) {
  const int64_t local_ms = t_ms + int64_t{offset_minutes} * 60'000;
  const int64_t days = FloorDiv(local_ms, 86'400'000);
  const int64_t in_day = local_ms - days * 86'400'000;
  int64_t y;
  unsigned m, d;
  CivilFromDays(days, &y, &m, &d);
  const int64_t hh = in_day / 3'600'000, mm = in_day / 60'000 % 60, ss = in_day / 1000 % 60,
                ms = in_day % 1000;
  char buf[48];
  int n = std::snprintf(buf, sizeof buf, "%04lld-%02u-%02uT%02lld:%02lld:%02lld.%03lld",
                        static_cast<long long>(y), m, d, static_cast<long long>(hh),
                        static_cast<long long>(mm), static_cast<long long>(ss),
                        static_cast<long long>(ms));
  out->append(buf, n);
  if (utc_z) {
    out->push_back('Z');
    return;
  }
  const int off = offset_minutes < 0 ? -offset_minutes : offset_minutes;
  n = std::snprintf(buf, sizeof buf, "%c%02d:%02d", offset_minutes < 0 ? '-' : '+', off / 60, off % 60);
  out->append(buf, n);
}

bool ParseHour(std::string_view text, int64_t* t_ms) {
  // Exactly "YYYY-MM-DDTHH".
  if (text.size() != 13 || text[4] != '-' || text[7] != '-' || text[10] != 'T') return false;
  auto num = [&](size_t at, size_t len, int* v) {
    auto r = std::from_chars(text.data() + at, text.data() + at + len, *v);
    return r.ec == std::errc() && r.ptr == text.data() + at + len;
  };
  int y, m, d, h;
  if (!num(0, 4, &y) || !num(5, 2, &m) || !num(8, 2, &d) || !num(11, 2, &h)) return false;
  if (m < 1 || m > 12 || d < 1 || d > 31 || h < 0 || h > 23) return false;
  *t_ms = (DaysFromCivil(y, static_cast<unsigned>(m), static_cast<unsigned>(d)) * 24 + h) * 3'600'000;
  return true;
}

ShardCounts FormatShard(const LampWorld& world, const std::vector<LampEvent>& events,
                        TextFormat format, bool lean, std::string* out) {
  ShardCounts counts;
  std::string cells[kCsvFieldCount];
  const char sep = format == TextFormat::kTsv ? '\t' : ',';
  if (format != TextFormat::kNdjson) {
    for (char c : CsvColumns()) out->push_back(c == ',' ? sep : c);
    out->push_back('\n');
  }
  for (const LampEvent& e : events) {
    if (format == TextFormat::kNdjson) {
      if (e.malformed) {
        WriteBrokenJson(world, e, lean, out);
      } else {
        WriteJson(world, e, lean, out);
      }
    } else {
      WriteCsvRow(world, e, sep, cells, out);
    }
    out->push_back('\n');
    ++(e.malformed ? counts.malformed : counts.records);
  }
  return counts;
}

}  // namespace fanfold::gen
