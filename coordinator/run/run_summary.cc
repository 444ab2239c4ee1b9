#include "coordinator/run/run_summary.h"

#include <cstdio>

namespace fanfold {

std::string GroupedInteger(uint64_t n) {
  std::string digits = std::to_string(n);
  std::string out;
  for (size_t i = 0; i < digits.size(); ++i) {
    if (i > 0 && (digits.size() - i) % 3 == 0) out.push_back(',');
    out.push_back(digits[i]);
  }
  return out;
}

std::string Megabytes(uint64_t bytes) {
  char buf[32];
  snprintf(buf, sizeof buf, "%.1f MB", static_cast<double>(bytes) / 1e6);
  return buf;
}

std::vector<std::string> FormatRunSummary(const RunSummary& s, const ShardList& list) {
  std::vector<std::string> lines;
  for (const auto& m : s.samples) {
    // A chunk's reader counts lines from the chunk's first byte: say so,
    // rather than print a line number that is wrong for the whole file.
    const Shard& shard = list.shards[m.shard];
    const std::string where = shard.offset > 0 ? " (the chunk from byte " + std::to_string(shard.offset) + ")" : "";
    // An NDJSON reason starts "column C: ...": "line L, column C: ...".
    const bool column = m.sample.reason.rfind("column ", 0) == 0;
    lines.push_back("malformed record: " + shard.path + where + " line " + std::to_string(m.sample.line) +
                    (column ? ", " : ": ") + m.sample.reason);
  }
  for (const auto& f : s.failures) lines.push_back("shard " + std::to_string(f.shard) + " failed: " + f.message);
  const MergeTotals& t = s.totals;
  char rate[96];
  // Over the bytes read in this session: a resumed run's reused shards were
  // read by an earlier one.
  const double mbps = s.wall_seconds > 0 ? static_cast<double>(s.processed.raw_bytes) / 1e6 / s.wall_seconds : 0;
  if (s.shards_reused > 0 && s.processed.shards == 0)
    snprintf(rate, sizeof rate, "nothing processed, %.2f s", s.wall_seconds);
  else if (s.shards_reused > 0)
    snprintf(rate, sizeof rate, "processed: %s decompressed in %.2f s, %.1f MB/s",
             Megabytes(s.processed.raw_bytes).c_str(), s.wall_seconds, mbps);
  else
    snprintf(rate, sizeof rate, "%.2f s, %.1f MB/s", s.wall_seconds, mbps);
  const std::string split = s.shards_reused > 0 ? " (" + std::to_string(s.shards_reused) +
                                                      " reused from the run directory, " +
                                                      std::to_string(s.processed.shards) + " processed)"
                                                : "";
  std::string line;
  if (s.interrupted) {
    // What is saved is what counts; the record totals cover only the shards
    // merged (in shard order) before the signal, and say so.
    line = std::to_string(s.shards_saved) + " of " + std::to_string(s.shards_total) + " shards saved" + split +
           ", " + std::to_string(s.failures.size()) + " failed (interrupted) | merged so far: " +
           std::to_string(t.shards_merged) + " shards,";
  } else {
    line = std::to_string(t.shards_merged) + " of " + std::to_string(s.shards_total) + " shards done" + split + ", " +
           std::to_string(s.failures.size()) + " failed |";
  }
  line += " records: " + GroupedInteger(t.records) + " read, " + GroupedInteger(t.kept) + " kept, " +
          GroupedInteger(t.malformed) + " malformed | " + Megabytes(t.compressed_bytes) + " in, " +
          Megabytes(t.raw_bytes) + " decompressed | " + rate;
  if (s.peak_rss > 0)
    line += " | peak memory: coordinator " + Megabytes(s.peak_rss) +
            (s.peak_worker_rss > 0 ? ", largest worker " + Megabytes(s.peak_worker_rss) : "");
  lines.push_back(line);
  return lines;
}

}  // namespace fanfold
