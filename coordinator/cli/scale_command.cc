#include "coordinator/cli/scale_command.h"

#include <stdlib.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <ctime>
#include <filesystem>
#include <map>
#include <thread>

#include "common/port/files/file_util.h"
#include "coordinator/run/summary_json.h"
#include "coordinator/run/console_log.h"
#include "coordinator/report/report_html.h"
#include "coordinator/rundir/run_record_reader.h"
#include "coordinator/report/scale_result.h"

namespace fanfold {
namespace {

namespace fs = std::filesystem;

// Removes the scratch directory on every way out of ScaleJob.
class ScratchDir {
 public:
  ~ScratchDir() {
    if (!path_.empty()) {
      std::error_code ec;
      fs::remove_all(path_, ec);
    }
  }
  Status Create() {
    std::error_code ec;
    fs::path base = fs::temp_directory_path(ec);
    if (ec) base = "/tmp";
    std::string templ = (base / "fanfold-scale-XXXXXX").string();
    if (::mkdtemp(templ.data()) == nullptr)
      return Status::IoError("cannot create a scratch directory under " + base.string());
    path_ = templ;
    return Status::Ok();
  }
  const std::string& path() const { return path_; }

 private:
  std::string path_;
};

std::string NowIso() {
  std::time_t t = std::time(nullptr);
  char buf[32];
  std::strftime(buf, sizeof buf, "%Y-%m-%dT%H:%M:%SZ", std::gmtime(&t));
  return buf;
}

std::string Seconds(double s) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.3f s", s);
  return buf;
}

// One run of the job; what it cost and what it wrote.
struct OneRun {
  double wall_s = 0;
  bool shards_failed = false;
  std::string output;  // the bytes of the run's result files, in name order
  RunRecord record;
};

Status RunOnce(const ScaleOptions& o, const std::string& scratch, const std::string& name, int workers,
               OneRun* out) {
  RunOptions ro;
  ro.job_path = o.job_path;
  ro.workers = workers;
  ro.memory_cap = o.memory_cap;
  ro.run_dir = (fs::path(scratch) / name).string();
  ro.results_in_run_dir_only = true;
  ro.fresh = true;
  ro.quiet = true;
  ro.progress = ProgressMode::kOff;
  ro.check_fields = false;  // the sample would be timed with the run
  const auto t0 = std::chrono::steady_clock::now();
  CommandOutcome c = RunJob(ro);
  out->wall_s = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  if (!c.status.ok()) return c.status.WithContext("scale: the run at " + std::to_string(workers) + " workers");
  out->shards_failed = c.shards_failed;
  // Every reduction's result file (result.<ext> or result-<name>.<ext>).
  std::vector<fs::path> results;
  for (const fs::directory_entry& e : fs::directory_iterator(ro.run_dir))
    if (IsResultFileName(e.path().filename().string())) results.push_back(e.path());
  std::sort(results.begin(), results.end());
  out->output.clear();
  for (const fs::path& p : results) {
    std::string bytes;
    FF_RETURN_IF_ERROR(ReadWholeFile(p.string(), &bytes));
    out->output += p.filename().string() + "\n" + bytes;
  }
  Result<RunRecord> rec = ReadRunRecord(ro.run_dir);
  if (!rec.ok()) return rec.status();
  out->record = std::move(*rec);
  std::error_code ec;
  fs::remove_all(ro.run_dir, ec);
  return Status::Ok();
}

}  // namespace

CommandOutcome ScaleJob(const ScaleOptions& o) {
  CommandOutcome out;
  auto note = [&](const std::string& line) {
    if (!o.quiet) LogInfo(line);
  };
  auto warn = [&](ScaleResult* r, const std::string& line) {
    r->warnings.push_back(line);
    if (!o.quiet) LogWarning(line);
  };
  std::vector<int> counts = o.workers;
  if (counts.empty() || counts[0] != 1) {
    counts.insert(counts.begin(), 1);
    note("scale: adding a 1-worker run, the baseline of speedup and of the shard-time bound");
  }
  ScratchDir scratch;
  if (Status s = scratch.Create(); !s.ok()) {
    out.status = s;
    return out;
  }
  ScaleResult result;
  result.job = fs::absolute(o.job_path).lexically_normal().string();
  result.created = NowIso();
  result.cores = std::thread::hardware_concurrency();
  result.repeat = o.repeat;

  // Warm-up: fills the page cache (and proves the job runs) before timing.
  OneRun warm;
  note("scale: warm-up run at " + std::to_string(counts.back()) +
       " workers (not timed), so that the input is in the page cache");
  if (Status s = RunOnce(o, scratch.path(), "warm-up", counts.back(), &warm); !s.ok()) {
    out.status = s;
    return out;
  }
  result.fingerprint = warm.record.manifest.fingerprint;
  const SummaryRecord& ws = warm.record.summary;
  result.shards = ws.shards_total;
  result.bytes_compressed = ws.bytes_compressed;
  result.bytes_decompressed = ws.bytes_decompressed;
  result.records = ws.records_read;
  result.output_bytes = warm.output.size();
  const std::string reference = warm.output;
  if (warm.shards_failed) warn(&result, "some shards of the job fail; the timings cover the others");
  for (int p : counts) {
    if (result.cores > 0 && static_cast<unsigned>(p) > result.cores)
      warn(&result, std::to_string(p) + " workers exceed the " + std::to_string(result.cores) +
                        " cores available; expect no gain beyond " + std::to_string(result.cores));
    if (p > 1 && static_cast<uint64_t>(p) > result.shards)
      warn(&result, "the job has " + std::to_string(result.shards) + " shards, so at most that many of " +
                        std::to_string(p) + " workers can be busy");
  }

  size_t runs = 1, differing = 0;
  std::vector<std::vector<double>> shard_times(result.shards);  // 1-worker runs, per shard
  for (int p : counts) {
    ScalePoint pt;
    pt.workers = p;
    for (int r = 1; r <= o.repeat; ++r) {
      OneRun run;
      const std::string name = "w" + std::to_string(p) + "-r" + std::to_string(r);
      if (Status s = RunOnce(o, scratch.path(), name, p, &run); !s.ok()) {
        out.status = s;
        return out;
      }
      ++runs;
      pt.wall_seconds.push_back(run.wall_s);
      note("scale: " + std::to_string(p) + (p == 1 ? " worker" : " workers") + ", run " + std::to_string(r) +
           " of " + std::to_string(o.repeat) + ": " + Seconds(run.wall_s));
      if (run.output != reference) {
        ++differing;
        warn(&result, "the result at " + std::to_string(p) + " workers (run " + std::to_string(r) +
                          ") differs from the warm-up run's");
      }
      if (p == 1) {
        for (const AttemptEntry& a : run.record.attempts)
          if (a.done() && a.final && a.shard < shard_times.size()) shard_times[a.shard].push_back(a.seconds());
      }
    }
    result.points.push_back(std::move(pt));
  }
  for (auto& t : shard_times) result.shard_seconds.push_back(Median(t));
  result.identical_outputs = differing == 0;
  ComputeScaleDerived(&result);

  const std::string table = FormatScaleTable(result);
  std::fwrite(table.data(), 1, table.size(), stdout);
  std::fflush(stdout);
  if (result.identical_outputs)
    note("scale: the result is byte-identical in all " + std::to_string(runs) + " runs (warm-up included, " +
         std::to_string(result.output_bytes) + " bytes)");
  note("scale: speedup = T(1)/T(p); efficiency = speedup/p; serial fraction = Karp-Flatt (1/S - 1/p)/(1 - 1/p); "
       "skew bound = the best speedup the 1-worker shard times allow (total / max(longest shard, total/p))");

  if (!o.json_path.empty()) {
    Status s = WriteFileAtomic(o.json_path, EncodeScaleJson(result));
    if (!s.ok()) {
      out.status = s;
      return out;
    }
    note("scale: results written to " + o.json_path);
  }
  if (!o.html_path.empty()) {
    Status s = WriteFileAtomic(o.html_path, RenderScaleHtml(result));
    if (!s.ok()) {
      out.status = s;
      return out;
    }
    note("scale: chart written to " + o.html_path);
  }
  out.shards_failed = !result.identical_outputs || warm.shards_failed;
  return out;
}

}  // namespace fanfold
