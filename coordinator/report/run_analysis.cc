#include "coordinator/report/run_analysis.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <ctime>
#include <filesystem>
#include <map>
#include <set>

#include "coordinator/run/run_summary.h"

namespace fanfold {
namespace {

constexpr int kThroughputBins = 60;

std::string Ms(double seconds) {
  char buf[32];
  if (seconds >= 10)
    std::snprintf(buf, sizeof buf, "%.1f s", seconds);
  else if (seconds >= 1)
    std::snprintf(buf, sizeof buf, "%.2f s", seconds);
  else
    std::snprintf(buf, sizeof buf, "%.1f ms", seconds * 1e3);
  return buf;
}

std::string Pct(uint64_t part, uint64_t whole) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.0f%%", whole ? 100.0 * static_cast<double>(part) / static_cast<double>(whole) : 0);
  return buf;
}

RunTotals JournalTotals(const RunRecord& r) {
  RunTotals t;
  t.shards_total = r.manifest.shards.shards.size();
  std::set<uint32_t> done, failed;
  uint64_t first = UINT64_MAX, last = 0;
  for (const AttemptEntry& a : r.attempts) {
    first = std::min(first, a.start_ns);
    last = std::max(last, a.end_ns);
    if (!a.final) {
      ++t.retries;
      continue;
    }
    if (a.done()) {
      done.insert(a.shard);
      failed.erase(a.shard);
      t.records_read += a.records;
      t.records_kept += a.kept;
      t.records_malformed += a.malformed;
      t.bytes_compressed += a.bytes_in;
      t.bytes_decompressed += a.bytes_raw;
    } else if (!done.count(a.shard)) {
      failed.insert(a.shard);
    }
  }
  t.shards_done = done.size();
  t.shards_failed = failed.size();
  t.wall_seconds = last > first ? static_cast<double>(last - first) / 1e9 : 0;
  t.workers = r.sessions.empty() ? 0 : r.sessions.back().workers;
  t.shards_reused = r.sessions.empty() ? 0 : r.sessions.back().reused;
  return t;
}

// The done attempts of the last session, and its span: what that session's
// workers did, apart from the shards it reused.
void LastSessionWork(const RunRecord& r, RunTotals* t) {
  if (r.sessions.empty()) return;
  const size_t last = r.sessions.size() - 1;
  // ParseJournal sets a session's start to its first event, attempts included.
  const uint64_t start_ns = r.sessions[last].start_ns;
  uint64_t end_ns = r.sessions[last].end_ns;
  for (const AttemptEntry& a : r.attempts) {
    if (a.session != last) continue;
    end_ns = std::max(end_ns, a.end_ns);
    if (!a.done()) continue;
    ++t->processed_shards;
    t->processed_records += a.records;
    t->processed_bytes_decompressed += a.bytes_raw;
  }
  t->processed_seconds = end_ns > start_ns ? static_cast<double>(end_ns - start_ns) / 1e9 : 0;
}

}  // namespace

double StragglerThreshold(const RunAnalysis& a) {
  return std::max({a.fence_s, kStragglerMinRatio * a.median_s, a.median_s + kStragglerMinExcessS});
}

double QuantileType7(const std::vector<double>& x, double p) {
  if (x.empty()) return 0;
  const double h = (static_cast<double>(x.size()) - 1) * p;  // 0-based form of (n-1)p + 1
  const size_t lo = static_cast<size_t>(std::floor(h));
  if (lo + 1 >= x.size()) return x.back();
  return x[lo] + (h - static_cast<double>(lo)) * (x[lo + 1] - x[lo]);
}

RunAnalysis AnalyzeRun(const RunRecord& r) {
  RunAnalysis a;
  if (r.summary.present) {
    const SummaryRecord& s = r.summary;
    a.totals = {
        true,           s.shards_total, s.shards_done,       s.shards_failed,    s.shards_reused,      s.retries,
        s.records_read, s.records_kept, s.records_malformed, s.bytes_compressed, s.bytes_decompressed, s.wall_seconds,
        s.workers};
  } else {
    a.totals = JournalTotals(r);
  }
  RunTotals& t = a.totals;
  if (r.summary.present && r.summary.has_processed) {
    t.processed_shards = r.summary.processed_shards;
    t.processed_records = r.summary.processed_records;
    t.processed_bytes_decompressed = r.summary.processed_bytes_decompressed;
    t.processed_seconds = t.wall_seconds;
  } else if (t.shards_reused == 0) {
    // Nothing reused: everything counted was processed, in the time shown.
    t.processed_shards = t.shards_done;
    t.processed_records = t.records_read;
    t.processed_bytes_decompressed = t.bytes_decompressed;
    t.processed_seconds = t.wall_seconds;
  } else {
    LastSessionWork(r, &t);  // a summary from before it counted the reused apart, or none
    if (r.summary.present) t.processed_seconds = t.wall_seconds;
  }

  // Sessions: lanes and throughput.
  std::vector<SessionView> views(r.sessions.size());
  for (size_t i = 0; i < r.attempts.size(); ++i) views[r.attempts[i].session].attempts.push_back(i);
  for (size_t s = 0; s < views.size(); ++s) {
    SessionView& v = views[s];
    if (v.attempts.empty()) continue;
    v.session = s;
    const RunSession& rs = r.sessions[s];
    uint64_t t0 = rs.start_ns, end = rs.end_ns;
    int lanes = std::max(1, rs.workers);
    for (size_t i : v.attempts) {
      const AttemptEntry& e = r.attempts[i];
      if (t0 == 0 || e.start_ns < t0) t0 = e.start_ns;
      end = std::max(end, e.end_ns);
      lanes = std::max(lanes, e.worker + 1);
    }
    v.t0_ns = t0;
    v.lanes = lanes;
    v.span_s = end > t0 ? static_cast<double>(end - t0) / 1e9 : 0;
    const double span = std::max(v.span_s, 1e-6);
    v.bin_s = span / kThroughputBins;
    v.mb_per_s.assign(kThroughputBins, 0);
    v.records_per_s.assign(kThroughputBins, 0);
    for (size_t i : v.attempts) {
      const AttemptEntry& e = r.attempts[i];
      if (!e.done()) continue;
      const double s0 = static_cast<double>(e.start_ns - t0) / 1e9, s1 = static_cast<double>(e.end_ns - t0) / 1e9;
      const double len = s1 - s0;
      for (int b = std::max(0, static_cast<int>(s0 / v.bin_s)); b < kThroughputBins; ++b) {
        const double b0 = b * v.bin_s, b1 = b0 + v.bin_s;
        if (b0 > s1) break;
        // Spread the shard's work evenly over its attempt (an instant one into one bin).
        const double share = len > 0 ? std::max(0.0, std::min(s1, b1) - std::max(s0, b0)) / len : 1.0;
        v.mb_per_s[b] += share * static_cast<double>(e.bytes_raw) / 1e6 / v.bin_s;
        v.records_per_s[b] += share * static_cast<double>(e.records) / v.bin_s;
        if (len <= 0) break;
      }
    }
    a.sessions.push_back(std::move(v));
  }

  // The last successful attempt of each shard; phases; bad records.
  std::map<uint32_t, const AttemptEntry*> done;
  for (const AttemptEntry& e : r.attempts) {
    if (!e.done()) continue;
    done[e.shard] = &e;
    a.read_ns += e.read_ns;
    a.parse_ns += e.parse_ns;
    a.aggregate_ns += e.aggregate_ns;
    a.encode_ns += e.encode_ns;
    ++a.done_attempts;
    a.phases_estimated += !e.phases_measured;
    a.attempts_ns += e.end_ns > e.start_ns ? e.end_ns - e.start_ns : 0;
  }
  std::vector<double> secs;
  for (const auto& [shard, e] : done) {
    a.shard_times.push_back({shard, e->seconds(), e->records, e->worker, false});
    secs.push_back(e->seconds());
    if (e->malformed > 0) a.malformed_by_shard.emplace_back(shard, e->malformed);
  }
  std::sort(secs.begin(), secs.end());
  a.median_s = QuantileType7(secs, 0.5);
  a.q1_s = QuantileType7(secs, 0.25);
  a.q3_s = QuantileType7(secs, 0.75);
  a.fence_s = a.q3_s + 1.5 * (a.q3_s - a.q1_s);
  const double threshold = StragglerThreshold(a);
  for (ShardTime& t : a.shard_times) {
    t.straggler = t.seconds > threshold;
    a.straggler_count += t.straggler;
  }
  a.slowest = a.shard_times;
  std::sort(a.slowest.begin(), a.slowest.end(), [](const ShardTime& x, const ShardTime& y) {
    return x.seconds != y.seconds ? x.seconds > y.seconds : x.shard < y.shard;
  });
  if (a.slowest.size() > 8) a.slowest.resize(8);

  // Failed shards: the summary's list, else the journal's final failures.
  if (r.summary.present) {
    for (const auto& f : r.summary.failed) a.failures.push_back({f.shard, f.path, f.reason, f.attempts});
  } else {
    std::map<uint32_t, FailureView> failed;
    for (const AttemptEntry& e : r.attempts) {
      if (e.done())
        failed.erase(e.shard);
      else if (e.final)
        failed[e.shard] = {e.shard, r.ShardPath(e.shard), e.message, e.attempt};
    }
    for (auto& [shard, f] : failed) a.failures.push_back(f);
  }

  if (r.summary.present)
    a.status = a.totals.shards_failed ? "finished with failed shards" : "finished";
  else if (!r.sessions.empty() && r.sessions.back().interrupted)
    a.status = "interrupted";
  else
    a.status = "unfinished";
  return a;
}

std::string ProcessedRateText(const RunTotals& t) {
  const double mbps =
      t.processed_seconds > 0 ? static_cast<double>(t.processed_bytes_decompressed) / 1e6 / t.processed_seconds : 0;
  char rate[96];
  if (t.shards_reused > 0 && t.processed_shards == 0)
    std::snprintf(rate, sizeof rate, "nothing processed, %.2f s", t.processed_seconds);
  else if (t.shards_reused > 0)
    std::snprintf(rate, sizeof rate, "processed: %s decompressed in %.2f s, %.1f MB/s",
                  Megabytes(t.processed_bytes_decompressed).c_str(), t.processed_seconds, mbps);
  else
    std::snprintf(rate, sizeof rate, "%.2f s, %.1f MB/s", t.processed_seconds, mbps);
  return rate;
}

std::string PhasesProvenance(const RunAnalysis& a) {
  if (a.phases_estimated > 0) {
    // Journal lines of earlier versions: parsing was what a sampled guess
    // at aggregating left over, so the split is not to be trusted.
    return a.phases_estimated == a.done_attempts
               ? std::string("estimated, not measured: the journal predates measured phases")
               : "estimated for " + std::to_string(a.phases_estimated) + " of " + std::to_string(a.done_attempts) +
                     " attempts: journal lines that predate measured phases";
  }
  const uint64_t busy = a.read_ns + a.parse_ns + a.aggregate_ns + a.encode_ns;
  char fill[96];
  std::snprintf(fill, sizeof fill, "measured; they fill %.1f%% of the attempts' time",
                a.attempts_ns ? 100.0 * static_cast<double>(busy) / static_cast<double>(a.attempts_ns) : 0.0);
  return fill;
}

std::vector<std::string> GenerationLines(const RunRecord& r, size_t names) {
  std::vector<std::string> lines;
  if (r.generations.size() < 2) return lines;
  auto list = [names](const std::vector<std::string>& paths) {
    std::string out;
    for (size_t i = 0; i < paths.size() && i < names; ++i)
      out += (i ? ", " : "") + std::filesystem::path(paths[i]).filename().string();
    if (paths.size() > names) out += " +" + std::to_string(paths.size() - names) + " more";
    return out;
  };
  for (const GenerationEntry& g : r.generations) {
    const std::time_t t = static_cast<std::time_t>(g.time_ns / 1'000'000'000);
    char when[32];
    std::strftime(when, sizeof when, "%Y-%m-%d %H:%M:%S UTC", std::gmtime(&t));
    std::string line = "generation " + std::to_string(g.generation) + ", " + when + ": " + GroupedInteger(g.reused) +
                       " reused, " + GroupedInteger(g.computed) + " computed, " + GroupedInteger(g.dropped) +
                       " dropped, " + (g.end_ns ? Ms(g.seconds()) : std::string("not finished"));
    if (g.generation > 1 && !g.computed_paths.empty()) line += "; computed: " + list(g.computed_paths);
    if (!g.dropped_paths.empty()) line += "; dropped: " + list(g.dropped_paths);
    lines.push_back(std::move(line));
  }
  return lines;
}

std::vector<std::string> FormatReportText(const RunRecord& r, const RunAnalysis& a) {
  std::vector<std::string> lines;
  const RunTotals& t = a.totals;
  lines.push_back("run: " + r.dir + " (job " + std::filesystem::path(r.manifest.job_path).filename().string() +
                  ", plan " + r.manifest.fingerprint + ")");
  std::string status = "status: " + a.status + "; " + std::to_string(t.shards_done) + " of " +
                       std::to_string(t.shards_total) + " shards done, " + std::to_string(t.shards_failed) +
                       " failed, " + std::to_string(t.retries) + " retried";
  if (t.shards_reused) status += ", " + std::to_string(t.shards_reused) + " reused";
  status += "; " + std::to_string(t.workers) + (t.workers == 1 ? " worker" : " workers");
  if (!t.from_summary) status += " (totals from the journal: no summary.json)";
  lines.push_back(status);
  const std::string rate = ProcessedRateText(t);
  lines.push_back("records: " + GroupedInteger(t.records_read) + " read, " + GroupedInteger(t.records_kept) +
                  " kept, " + GroupedInteger(t.records_malformed) + " malformed | " + Megabytes(t.bytes_compressed) +
                  " in, " + Megabytes(t.bytes_decompressed) + " decompressed | " + rate);
  for (std::string& line : GenerationLines(r)) lines.push_back(std::move(line));
  if (r.earlier_sessions > 0)
    lines.push_back("shard times below: generation " +
                    std::to_string(r.generations.empty() ? 1 : r.generations.back().generation) + " only (" +
                    std::to_string(r.earlier_sessions) + " sessions of earlier generations left out)");
  if (!a.slowest.empty()) {
    const ShardTime& s = a.slowest[0];
    char ratio[32];
    std::snprintf(ratio, sizeof ratio, "%.1fx", a.median_s > 0 ? s.seconds / a.median_s : 0.0);
    lines.push_back("shard times: median " + Ms(a.median_s) + ", Q1-Q3 " + Ms(a.q1_s) + "-" + Ms(a.q3_s) +
                    "; slowest: shard " + std::to_string(s.shard) + " (" +
                    std::filesystem::path(r.ShardPath(s.shard)).filename().string() + ") " + Ms(s.seconds) + ", " +
                    ratio + " the median; " + std::to_string(a.straggler_count) +
                    (a.straggler_count == 1 ? " straggler" : " stragglers"));
  }
  const uint64_t busy = a.read_ns + a.parse_ns + a.aggregate_ns + a.encode_ns;
  if (busy > 0)
    lines.push_back("worker time: reading+decompressing " + Pct(a.read_ns, busy) + ", parsing " +
                    Pct(a.parse_ns, busy) + ", filtering+aggregating " + Pct(a.aggregate_ns, busy) + ", encoding " +
                    Pct(a.encode_ns, busy) + " (" + PhasesProvenance(a) + ")");
  for (const FailureView& f : a.failures)
    lines.push_back("failed: shard " + std::to_string(f.shard) + " (" + f.path + "): " + f.reason);
  for (const std::string& w : r.warnings) lines.push_back("note: " + w);
  return lines;
}

}  // namespace fanfold
