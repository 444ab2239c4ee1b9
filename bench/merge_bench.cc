// merge_bench: how long the coordinator takes to fold a month of hourly
// partial states. Builds P encoded partials of G groups each (744 x 50,000
// by default) with the measures of a benchmark job file, through the same
// GroupTable / PartialState / EncodePartial path a worker uses, and times
// Merger::Add (header check, checksum, zstd, merge from the bytes) for each, in
// shard order, then Merger::Finish. As in a run, the merger can reload a
// partial (here: rebuild its bytes), so it decodes each state once;
// --check-first leaves the reloader out, and every partial is checked
// before it is merged (two decodes). --runs GROUPS[:THREADS] sets the
// merger's sorted-run threshold (0: tables only; docs/streaming-merge.md).
// --overlap no walks each partial (or batch) before Add returns (default
// yes: the walk runs beside the next partials' copy, check and
// decompression, as in a run; the critical-path figure is then null).
// Encoding is not timed: T templates are
// encoded once, and each partial is a copy of one with its shard index
// restamped. --time-limit stops early and extrapolates to all P partials.
// Prints one JSON object on stdout; exit status 0, 2 bad usage, 3 failure.
#include <sys/resource.h>
#include <time.h>
#include <xxhash.h>
#include <zstd.h>

#include <algorithm>
#include <charconv>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "common/partial/group_key.h"
#include "common/job/job_spec.h"
#include "common/partial/partial_codec.h"
#include "common/job/plan.h"
#include "coordinator/run/merger.h"

namespace fanfold {
namespace {

struct BenchOptions {
  std::string job_path;    // the job whose measures the partials carry
  uint64_t partials = 744;  // shards (31 days x 24 hours)
  uint64_t groups = 50000;  // groups per partial
  uint64_t values = 4;      // records added per group per partial
  uint64_t templates = 4;   // distinct partial contents, shifted key windows
  double time_limit_s = 0;  // stop merging after this long (0 = never) and extrapolate
  bool check_first = false;  // no reloader: check every partial, then merge it
  bool overlap = true;       // Merger::SetOverlap
  uint64_t run_threshold = Merger::kRunsByBudget;  // the merge share's rule (MergeMemory default)
  uint64_t fold_threads = 0;   // the runs' key ranges (0: as --threads)
  uint64_t threads = 0;        // merge threads (0: Merger::DefaultThreads())
};

// SplitMix64 (Steele, Lea & Flood 2014): a fixed, seedable stream.
uint64_t Mix(uint64_t x) {
  x += 0x9e3779b97f4a7c15ULL;
  x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9ULL;
  x = (x ^ (x >> 27)) * 0x94d049bb133111ebULL;
  return x ^ (x >> 31);
}

double Seconds(std::chrono::steady_clock::duration d) { return std::chrono::duration<double>(d).count(); }

// CPU time of this process: on a shared machine, less noisy than wall time.
double CpuSeconds() {
  timespec ts{};
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &ts);
  return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
}

bool ParseCount(std::string_view text, uint64_t lo, uint64_t hi, uint64_t* out) {
  uint64_t v = 0;
  auto [p, ec] = std::from_chars(text.data(), text.data() + text.size(), v);
  if (ec != std::errc() || p != text.data() + text.size() || v < lo || v > hi) return false;
  *out = v;
  return true;
}

// Sets the shard index of an encoded partial and recomputes its checksum,
// following the layout in common/partial/partial_codec.h (index at offset 16,
// XXH3-64 of bytes [0, 152) and the stored body at offset 152). A layout
// change makes Merger::Add reject the partial, and this bench fail.
void RestampShardIndex(uint32_t shard, std::string* partial) {
  constexpr size_t kIndexOffset = 16, kChecksumOffset = 152;
  for (int b = 0; b < 4; ++b) (*partial)[kIndexOffset + b] = static_cast<char>((shard >> (8 * b)) & 0xff);
  XXH3_state_t* st = XXH3_createState();
  XXH3_64bits_reset(st);
  XXH3_64bits_update(st, partial->data(), kChecksumOffset);
  XXH3_64bits_update(st, partial->data() + kPartialHeaderSize, partial->size() - kPartialHeaderSize);
  const uint64_t sum = XXH3_64bits_digest(st);
  XXH3_freeState(st);
  for (int b = 0; b < 8; ++b) (*partial)[kChecksumOffset + b] = static_cast<char>((sum >> (8 * b)) & 0xff);
}

// The floor the merge is measured against: decompressing each merged
// partial's body as the run directory stores it (wall and process CPU time) (one zstd frame after the
// header; layout in common/partial/partial_codec.h: the stored length at
// offset 112, the length before compression at 104), in one thread, into
// a buffer allocated once. Returns seconds, or -1 if a body is not zstd.
struct Decompressed {
  double wall_s = -1, cpu_s = -1;
};
Decompressed DecompressSeconds(const std::vector<std::string>& encoded, uint64_t count) {
  constexpr size_t kRawLenOffset = 104, kStoredLenOffset = 112;
  const auto u64 = [](const std::string& b, size_t at) {
    uint64_t v = 0;
    for (int i = 7; i >= 0; --i) v = v << 8 | static_cast<uint8_t>(b[at + static_cast<size_t>(i)]);
    return v;
  };
  ZSTD_DCtx* d = ZSTD_createDCtx();
  std::string body;
  double total = 0;
  bool ok = true;
  const double c0 = CpuSeconds();
  for (uint64_t i = 0; i < count && ok; ++i) {
    const std::string& p = encoded[i % encoded.size()];
    const uint64_t raw = u64(p, kRawLenOffset), stored = u64(p, kStoredLenOffset);
    body.resize(raw);
    const auto t0 = std::chrono::steady_clock::now();
    const size_t n = ZSTD_decompressDCtx(d, body.data(), body.size(), p.data() + kPartialHeaderSize, stored);
    total += Seconds(std::chrono::steady_clock::now() - t0);
    ok = !ZSTD_isError(n) && n == raw;
  }
  const double cpu = CpuSeconds() - c0;
  ZSTD_freeDCtx(d);
  if (!ok) return Decompressed{};
  return Decompressed{total, cpu};
}

int Usage(const std::string& message) {
  std::fprintf(stderr,
               "merge_bench: %s\nusage: merge_bench --job JOB.json [--partials N] [--groups N] "
               "[--values N] [--templates N] [--time-limit S] [--check-first yes|no] [--runs GROUPS[:THREADS]] [--threads N] [--overlap yes|no]\n",
               message.c_str());
  return 2;
}

// The key of group g: (hour of day, bucket label), shaped like the job's.
std::string GroupKey(uint64_t g) {
  std::string key;
  AppendKeyValue(Value::Number(static_cast<double>(g % 24)), &key);
  char label[32];
  std::snprintf(label, sizeof label, "B-%06llu", static_cast<unsigned long long>(g / 24));
  AppendKeyValue(Value::String(label), &key);
  return key;
}

// Fills partial t's table: groups [t * shift, t * shift + groups), each fed
// `values` records. Text measures get lamp ids, numeric ones lognormal-ish
// latencies, so sketches hold a realistic spread of buckets and registers.
void FillTemplate(const Plan& plan, const BenchOptions& o, uint64_t t, PartialState* p) {
  const uint64_t shift = o.groups / 20 + 1;
  char lamp[16];
  for (uint64_t g = t * shift; g < t * shift + o.groups; ++g) {
    MeasureState* const* states = p->reductions[0].groups.FindOrAdd(GroupKey(g));
    for (uint64_t r = 0; r < o.values; ++r) {
      const uint64_t h = Mix(Mix(t * 1000003 + g) + r);
      std::snprintf(lamp, sizeof lamp, "L-%05u", static_cast<unsigned>(h % 4000));
      const double latency = std::exp(2.4 + 0.8 * (static_cast<double>(h >> 11) / 9007199254740992.0 - 0.5) * 4);
      for (size_t m = 0; m < plan.reductions[0].measures.size(); ++m) {
        const MeasureKind kind = plan.reductions[0].measures[m].config.kind;
        const bool text = kind == MeasureKind::kHyperLogLog || kind == MeasureKind::kDistinct ||
                          kind == MeasureKind::kTop;
        Value args[2] = {text ? Value::String(lamp) : Value::Number(latency),
                         Value::Number(static_cast<double>(r))};
        states[m]->Add(args);
      }
    }
  }
}

int Run(const BenchOptions& o) {
  Result<JobSpec> spec = LoadJobSpec(o.job_path);
  if (!spec.ok()) {
    std::fprintf(stderr, "merge_bench: %s\n", spec.status().message().c_str());
    return 2;
  }
  const RecordFormat format = spec->format.value_or(RecordFormat::kNdjson);
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(spec.value()), format);
  if (!plan.ok()) {
    std::fprintf(stderr, "merge_bench: %s\n", plan.status().message().c_str());
    return 2;
  }
  const Plan& pl = **plan;
  std::vector<MeasureConfig> configs;
  for (const CompiledMeasure& m : pl.reductions[0].measures) configs.push_back(m.config);

  const auto build_start = std::chrono::steady_clock::now();
  std::vector<std::string> encoded;
  for (uint64_t t = 0; t < o.templates; ++t) {
    PartialState p(&configs);
    p.header.fingerprint = pl.fingerprint;
    p.header.records = o.groups * o.values;
    p.header.kept = p.header.records;
    FillTemplate(pl, o, t, &p);
    encoded.emplace_back();
    EncodePartial(p, &encoded.back());
  }
  const double build_s = Seconds(std::chrono::steady_clock::now() - build_start);

  Merger merger(&pl, static_cast<uint32_t>(o.partials));
  const size_t threads = o.threads > 0 ? static_cast<size_t>(o.threads) : Merger::DefaultThreads();
  merger.SetThreads(threads);
  merger.SetRunThreshold(o.run_threshold, o.fold_threads > 0 ? static_cast<size_t>(o.fold_threads) : threads);
  if (!o.check_first)
    merger.SetReloader([&](uint32_t shard, std::string* out) {
      *out = encoded[shard % o.templates];
      RestampShardIndex(shard, out);
      return Status::Ok();
    });
  merger.SetOverlap(o.overlap);
  // Timed as one stretch, the copy of each partial's bytes (as a run
  // reads them from a worker) included: with overlap, a walk still runs
  // while the next partial is copied.
  std::vector<double> each_s;
  uint64_t encoded_bytes = 0;
  const double cpu0 = CpuSeconds();
  const auto start = std::chrono::steady_clock::now();
  for (uint64_t i = 0; i < o.partials; ++i) {
    const auto t0 = std::chrono::steady_clock::now();
    std::string bytes = encoded[i % o.templates];
    RestampShardIndex(static_cast<uint32_t>(i), &bytes);
    encoded_bytes += bytes.size();
    Status s = merger.Add(static_cast<uint32_t>(i), std::move(bytes));
    each_s.push_back(Seconds(std::chrono::steady_clock::now() - t0));
    if (!s.ok()) {
      std::fprintf(stderr, "merge_bench: partial %llu: %s\n", static_cast<unsigned long long>(i),
                   s.message().c_str());
      return 3;
    }
    if (o.time_limit_s > 0 && Seconds(std::chrono::steady_clock::now() - start) >= o.time_limit_s) break;
  }
  merger.WaitForMerges();
  const double merge_s = Seconds(std::chrono::steady_clock::now() - start);
  const double merge_cpu_s = CpuSeconds() - cpu0;
  const uint64_t merged = each_s.size();
  // The rest are marked failed so that Finish() can run; the result then
  // holds what was merged.
  for (uint64_t i = merged; i < o.partials; ++i) merger.MarkFailed(static_cast<uint32_t>(i));
  if (!merger.late_failures().empty()) {
    std::fprintf(stderr, "merge_bench: partial %u failed to decode: %s\n", merger.late_failures()[0].first,
                 merger.late_failures()[0].second.c_str());
    return 3;
  }
  const auto f0 = std::chrono::steady_clock::now();
  Result<OutputTable> table = merger.Finish(0);
  const double finish_s = Seconds(std::chrono::steady_clock::now() - f0);
  if (!table.ok()) {
    std::fprintf(stderr, "merge_bench: %s\n", table.status().message().c_str());
    return 3;
  }
  if (merger.totals().shards_merged != merged) {
    std::fprintf(stderr, "merge_bench: merged %llu of %llu partials\n",
                 static_cast<unsigned long long>(merger.totals().shards_merged),
                 static_cast<unsigned long long>(merged));
    return 3;
  }
  const Decompressed dz = DecompressSeconds(encoded, merged);
  // The merge's critical path in CPU seconds: all of its CPU time, less the
  // range walks that ran beside the slowest one of each partial — what the
  // wall time approaches when each thread has a core (measured per thread,
  // so it holds on a busy machine where the wall time does not). Only
  // without overlap: with it the walks also run beside the decompression,
  // and the figure would add what overlaps (JSON null).
  char critical[64] = "null", critical_ratio[64] = "null";
  if (!o.overlap) {
    const double critical_cpu_s =
        merger.in_runs() ? merge_cpu_s
                         : merge_cpu_s - merger.tables(0).walk_cpu_s() + merger.tables(0).critical_walk_cpu_s();
    std::snprintf(critical, sizeof critical, "%.4f", critical_cpu_s);
    std::snprintf(critical_ratio, sizeof critical_ratio, "%.2f", critical_cpu_s / dz.cpu_s);
  }
  // Per range (thread) of the in-memory tables: groups merged.
  std::string per_thread = "[";
  if (!merger.in_runs())
    for (size_t i = 0; i < merger.tables(0).range_count(); ++i)
      per_thread += (i ? ", " : "") + std::to_string(merger.tables(0).merged_groups(i));
  per_thread += "]";
  const double decompress_s = dz.wall_s;
  if (decompress_s < 0) {
    std::fprintf(stderr, "merge_bench: a partial's body is not one zstd frame\n");
    return 3;
  }
  std::vector<double> sorted = each_s;
  std::sort(sorted.begin(), sorted.end());
  struct rusage ru {};
  getrusage(RUSAGE_SELF, &ru);
  std::printf(
      "{\"partials\": %llu, \"partials_merged\": %llu, \"groups_per_partial\": %llu, "
      "\"values_per_group\": %llu, \"result_groups\": %zu, \"measures\": %zu, \"mean_partial_bytes\": %.0f, "
      "\"build_s\": %.3f, \"merge_s\": %.4f, \"merge_all_s\": %.4f, \"merge_cpu_s\": %.4f, "
      "\"merge_all_cpu_s\": %.4f, \"finish_s\": %.4f, "
      "\"per_partial_ms\": {\"median\": %.3f, \"min\": %.3f, \"max\": %.3f}, \"peak_rss_kib\": %ld, "
      "\"sorted_runs\": %s, \"check_first\": %s, \"overlap\": %s, \"threads\": %zu, \"groups_per_thread\": %s, "
      "\"decompress_s\": %.4f, \"decompress_cpu_s\": %.4f, \"critical_path_cpu_s\": %s, "
      "\"critical_path_over_decompress_cpu\": %s, \"batched_partials\": %llu, \"merge_over_decompress\": %.2f, \"merge_cpu_over_decompress\": %.2f, "
      "\"produce_s_per_partial\": %.5f, \"merge_s_per_partial\": %.5f, \"workers_to_saturate_estimate\": %.1f}\n",
      static_cast<unsigned long long>(o.partials), static_cast<unsigned long long>(merged),
      static_cast<unsigned long long>(o.groups), static_cast<unsigned long long>(o.values), table->rows.size(),
      pl.reductions[0].measures.size(), static_cast<double>(encoded_bytes) / static_cast<double>(merged), build_s, merge_s,
      merge_s * static_cast<double>(o.partials) / static_cast<double>(merged), merge_cpu_s,
      merge_cpu_s * static_cast<double>(o.partials) / static_cast<double>(merged), finish_s,
      1000 * sorted[sorted.size() / 2], 1000 * sorted.front(), 1000 * sorted.back(), ru.ru_maxrss,
      merger.in_runs() ? "true" : "false", o.check_first ? "true" : "false", o.overlap ? "true" : "false", threads, per_thread.c_str(),
      decompress_s, dz.cpu_s, critical, critical_ratio,
      static_cast<unsigned long long>(merger.batched_partials()), merge_s / decompress_s, merge_cpu_s / dz.cpu_s, build_s / static_cast<double>(o.templates),
      merge_s / static_cast<double>(merged),
      // An estimate: workers producing partials at the measured cost of
      // building one (aggregating and encoding its values; reading and
      // parsing records not included, so a lower bound) keep the merge
      // busy from this many on.
      (build_s / static_cast<double>(o.templates)) / (merge_s / static_cast<double>(merged)));
  return 0;
}

}  // namespace
}  // namespace fanfold

int main(int argc, char** argv) {
  fanfold::BenchOptions o;
  for (int i = 1; i < argc; ++i) {
    const std::string_view flag = argv[i];
    if (i + 1 >= argc) return fanfold::Usage("missing value after " + std::string(flag));
    const std::string_view value = argv[++i];
    bool ok = true;
    if (flag == "--job") {
      o.job_path = std::string(value);
    } else if (flag == "--partials") {
      ok = fanfold::ParseCount(value, 1, 100000, &o.partials);
    } else if (flag == "--groups") {
      ok = fanfold::ParseCount(value, 1, 10000000, &o.groups);
    } else if (flag == "--values") {
      ok = fanfold::ParseCount(value, 1, 1000, &o.values);
    } else if (flag == "--templates") {
      ok = fanfold::ParseCount(value, 1, 64, &o.templates);
    } else if (flag == "--check-first") {
      ok = value == "yes" || value == "no";
      o.check_first = value == "yes";
    } else if (flag == "--overlap") {
      ok = value == "yes" || value == "no";
      o.overlap = value == "yes";
    } else if (flag == "--runs") {
      const size_t colon = value.find(':');
      ok = fanfold::ParseCount(value.substr(0, colon), 0, UINT64_MAX, &o.run_threshold) &&
           (colon == std::string_view::npos || fanfold::ParseCount(value.substr(colon + 1), 1, 64, &o.fold_threads));
    } else if (flag == "--threads") {
      ok = fanfold::ParseCount(value, 1, 64, &o.threads);
    } else if (flag == "--time-limit") {
      uint64_t secs = 0;
      ok = fanfold::ParseCount(value, 0, 86400, &secs);
      o.time_limit_s = static_cast<double>(secs);
    } else {
      return fanfold::Usage("unknown flag " + std::string(flag));
    }
    if (!ok) return fanfold::Usage("bad value for " + std::string(flag) + ": '" + std::string(value) + "'");
  }
  if (o.job_path.empty()) return fanfold::Usage("--job is required");
  return fanfold::Run(o);
}
