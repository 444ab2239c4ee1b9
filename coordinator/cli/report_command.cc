#include "coordinator/cli/report_command.h"

#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <memory>
#include <numeric>

#include <nlohmann/json.hpp>

#include "common/port/files/file_util.h"
#include "coordinator/run/console_log.h"
#include "coordinator/report/report_html.h"
#include "coordinator/report/run_analysis.h"
#include "coordinator/report/scale_result.h"

namespace fanfold {

std::string TimingsJson(const RunRecord& r) {
  std::vector<size_t> order(r.attempts.size());
  std::iota(order.begin(), order.end(), size_t{0});
  std::stable_sort(order.begin(), order.end(),
                   [&](size_t a, size_t b) { return r.attempts[a].start_ns < r.attempts[b].start_ns; });
  nlohmann::json out = nlohmann::json::array();
  for (size_t i : order) {
    const AttemptEntry& a = r.attempts[i];
    nlohmann::json j = AttemptEntryJson(a);  // the journal's fields, then what the export adds
    j["path"] = r.ShardPath(a.shard);
    j["wall_ns"] = a.end_ns > a.start_ns ? a.end_ns - a.start_ns : 0;
    out.push_back(std::move(j));
  }
  return out.dump(1) + "\n";
}

namespace {

// Figures of another job, or of another plan of this one, would sit beside
// this run's timeline as if they were its own: refuse them. A scale file
// written before the plan fingerprint was kept is checked by its job alone.
Status CheckScaleIsOfRun(const ScaleResult& scale, const RunRecord& rec, const ReportOptions& o) {
  const RunManifest& m = rec.manifest;
  if (scale.job != m.job_path)
    return Status::InvalidArgument("--scale " + o.scale_json_path + ": its figures are of the job " + scale.job +
                                   ", but the run " + o.run_dir + " is of the job " + m.job_path +
                                   "; to time this run's job: fanfold scale " + m.job_path + " --json FILE");
  if (!scale.fingerprint.empty() && scale.fingerprint != m.fingerprint)
    return Status::InvalidArgument("--scale " + o.scale_json_path + ": its figures are of another plan of " + m.job_path +
                                   " (plan " + scale.fingerprint + "; the run " + o.run_dir + " has plan " +
                                   m.fingerprint + "): the job file changed in between; time it again: fanfold scale " +
                                   m.job_path + " --json FILE");
  return Status::Ok();
}

}  // namespace

CommandOutcome ReportRun(const ReportOptions& o) {
  CommandOutcome out;
  Result<RunRecord> rec = ReadRunRecord(o.run_dir);
  if (!rec.ok()) {
    out.status = rec.status();
    return out;
  }
  std::unique_ptr<ScaleResult> scale;
  if (!o.scale_json_path.empty()) {
    std::string text;
    Status s = ReadWholeFile(o.scale_json_path, &text);
    if (!s.ok()) {
      out.status = s;
      return out;
    }
    Result<ScaleResult> r = DecodeScaleJson(text, o.scale_json_path);
    if (!r.ok()) {
      out.status = r.status();
      return out;
    }
    if (Status c = CheckScaleIsOfRun(*r, *rec, o); !c.ok()) {
      out.status = c;
      return out;
    }
    scale = std::make_unique<ScaleResult>(std::move(*r));
  }
  const RunAnalysis analysis = AnalyzeRun(*rec);
  const std::string html_path =
      o.html_path.empty() ? (std::filesystem::path(rec->dir) / "report.html").string() : o.html_path;
  Status s = WriteFileAtomic(html_path, RenderReportHtml(*rec, analysis, scale.get()));
  if (s.ok() && !o.timings_json_path.empty()) s = WriteFileAtomic(o.timings_json_path, TimingsJson(*rec));
  if (!s.ok()) {
    out.status = s;
    return out;
  }
  if (!o.quiet) {
    std::string text;
    for (const std::string& line : FormatReportText(*rec, analysis)) text += line + "\n";
    text += "report: " + html_path + "\n";
    if (!o.timings_json_path.empty()) text += "timings: " + o.timings_json_path + "\n";
    std::fwrite(text.data(), 1, text.size(), stdout);
    std::fflush(stdout);
    if (std::ferror(stdout)) out.status = Status::IoError("cannot write the summary to stdout");
  }
  return out;
}

}  // namespace fanfold
