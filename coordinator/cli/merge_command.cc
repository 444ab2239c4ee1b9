#include "coordinator/cli/merge_command.h"

#include <algorithm>
#include <filesystem>
#include <iostream>
#include <map>
#include <memory>

#include <nlohmann/json.hpp>

#include "common/job/job_loader.h"
#include "common/port/files/file_util.h"
#include "coordinator/cli/run_command.h"
#include "coordinator/cli/saved_run.h"
#include "coordinator/output/output_extension.h"
#include "coordinator/run/run_engine.h"
#include "coordinator/rundir/run_directory.h"
#include "coordinator/rundir/shard_parts.h"

namespace fs = std::filesystem;

namespace fanfold {

namespace {

// One part's run directory, opened and locked.
struct OpenPart {
  std::string given;  // as on the command line, for messages
  std::unique_ptr<RunDirectory> dir;
  RunManifest manifest;
  std::string name() const {
    return "'" + given + "' (part " + std::to_string(manifest.part.number) + "/" +
           std::to_string(manifest.part.count) + ")";
  }
};

Status Refuse(const std::string& why) { return Status::InvalidArgument("cannot merge: " + why); }

// Opens the part in dir and checks it on its own: a part, finished, every
// shard's committed partial present and fitting the shard and plan.
Result<OpenPart> OpenOnePart(const std::string& given) {
  OpenPart p;
  p.given = given;
  const std::string abs = fs::absolute(given).lexically_normal().string();
  if (RunDirectory::Probe(abs) == RunDirectory::State::kEmpty)
    return Refuse("'" + given + "' holds no run (no run.json): give the run directories of `fanfold run JOB --part I/N`");
  Result<std::unique_ptr<RunDirectory>> dir = RunDirectory::Open(abs, &p.manifest);
  if (!dir.ok()) return Refuse("'" + given + "': " + dir.status().message());
  p.dir = std::move(*dir);
  const PartOfRun& part = p.manifest.part;
  if (part.number == 0)
    return Refuse("'" + given + "' holds a run of the whole job, not a part (`fanfold run JOB --part I/N` makes parts)");
  if (RunDirectory::Probe(abs) != RunDirectory::State::kFinished)
    return Refuse(p.name() + " is unfinished: finish it first with fanfold resume " + given);
  // The part's last session may have failed shards whose old partials are
  // still on disk (resume never reuses the partial of a file that is gone):
  // the part's own verdict, in its summary, counts.
  std::string summary_text;
  uint64_t failed = 0;
  if (ReadWholeFile((fs::path(abs) / "summary.json").string(), &summary_text).ok()) {
    nlohmann::json summary = nlohmann::json::parse(summary_text, nullptr, /*allow_exceptions=*/false);
    if (summary.is_object() && summary.contains("shards") && summary["shards"].is_object() &&
        summary["shards"].contains("failed") && summary["shards"]["failed"].is_number_unsigned())
      failed = summary["shards"]["failed"].get<uint64_t>();
  }
  if (failed != 0)
    return Refuse(p.name() + " ended with " + std::to_string(failed) + " failed shard" + (failed == 1 ? "" : "s") +
                  " (its summary.json lists them): finish it first with fanfold resume " + given);
  Result<std::unique_ptr<Plan>> plan = LoadWorkerPlan((fs::path(abs) / kJobCopyFile).string(), p.manifest.format,
                                                      p.manifest.fingerprint,
                                                      fs::path(p.manifest.job_path).parent_path().string(),
                                                      p.manifest.plan_text);
  for (const Shard& s : p.manifest.shards.shards) {
    std::string bytes;
    Status st = p.dir->LoadPartial(s.index, &bytes);
    if (!st.ok()) return Refuse(p.name() + ": " + st.message());
    std::string problem = bytes.empty() ? "it has no committed partial (the shard failed)" : "";
    if (problem.empty() && plan.ok()) problem = PartialProblem(bytes, s, **plan);
    if (!problem.empty())
      return Refuse(p.name() + ": shard " + std::to_string(part.first_shard + s.index) + " '" + s.path + "': " +
                    problem + ". Finish the part first: fanfold resume " + given);
  }
  return p;
}

// A shard file whose identity differs between a and b ("" if none found).
std::string DisagreeingFile(const OpenPart& a, const OpenPart& b) {
  std::map<std::string, const Shard*> by_path;
  for (const Shard& s : a.manifest.shards.shards) by_path[s.path] = &s;
  for (const Shard& s : b.manifest.shards.shards) {
    auto it = by_path.find(s.path);
    if (it != by_path.end() && (it->second->file_size != s.file_size || it->second->mtime_ns != s.mtime_ns))
      return "'" + s.path + "' is " + std::to_string(it->second->file_size) + " bytes, mtime_ns " +
             std::to_string(it->second->mtime_ns) + " in " + a.name() + " but " + std::to_string(s.file_size) +
             " bytes, mtime_ns " + std::to_string(s.mtime_ns) + " in " + b.name();
  }
  return "";
}

// Checks the parts against each other; sorts them by part number.
Status CheckParts(std::vector<OpenPart>* parts) {
  const OpenPart& a = parts->front();
  for (const OpenPart& p : *parts) {
    if (p.manifest.fingerprint != a.manifest.fingerprint)
      return Refuse(p.name() + " has plan " + p.manifest.fingerprint + " but " + a.name() + " has plan " +
                    a.manifest.fingerprint +
                    ": they are parts of different jobs (or the filter, derived fields, groups or measures changed "
                    "between them); run every part of one job");
    if (p.manifest.part.count != a.manifest.part.count)
      return Refuse(p.name() + " and " + a.name() + " cut the job into different numbers of parts");
  }
  for (const OpenPart& p : *parts) {
    if (p.manifest.part.list_digest == a.manifest.part.list_digest &&
        p.manifest.part.total_shards == a.manifest.part.total_shards)
      continue;
    std::string file = DisagreeingFile(a, p);
    if (file.empty()) file = DisagreeingFile(p, a);
    return Refuse(p.name() + " was cut from another shard list than " + a.name() + " (" +
                  std::to_string(p.manifest.part.total_shards) + " shards, list " + p.manifest.part.list_digest +
                  ", against " + std::to_string(a.manifest.part.total_shards) + " shards, list " +
                  a.manifest.part.list_digest + ")" + (file.empty() ? "" : ": " + file) +
                  "; files were added, removed or changed between the part runs. Run every part again over the same "
                  "files (--fresh)");
  }
  std::stable_sort(parts->begin(), parts->end(),
                   [](const OpenPart& x, const OpenPart& y) { return x.manifest.part.number < y.manifest.part.number; });
  const uint32_t n = a.manifest.part.count;
  for (size_t i = 0; i + 1 < parts->size(); ++i)
    if ((*parts)[i].manifest.part.number == (*parts)[i + 1].manifest.part.number)
      return Refuse("'" + (*parts)[i].given + "' and '" + (*parts)[i + 1].given + "' are both part " +
                    std::to_string((*parts)[i].manifest.part.number) + "/" + std::to_string(n) +
                    ": the parts overlap; give each part once");
  uint32_t expected = 1;
  for (const OpenPart& p : *parts) {
    if (p.manifest.part.number != expected) break;
    ++expected;
  }
  if (expected <= n) {
    std::string missing;
    for (uint32_t k = 1, i = 0; k <= n; ++k) {
      while (i < parts->size() && (*parts)[i].manifest.part.number < k) ++i;
      if (i < parts->size() && (*parts)[i].manifest.part.number == k) continue;
      if (!missing.empty()) missing += ", ";
      missing += std::to_string(k) + "/" + std::to_string(n);
    }
    return Refuse("part" + std::string(missing.find(',') == std::string::npos ? " " : "s ") + missing + " of " +
                  std::to_string(n) + (missing.find(',') == std::string::npos ? " is" : " are") +
                  " missing: give the run directory of `fanfold run JOB --part I/" + std::to_string(n) +
                  "` for each");
  }
  // Parts 1..N of one list: their ranges must tile it, in order.
  uint32_t next = 0;
  for (const OpenPart& p : *parts) {
    if (p.manifest.part.first_shard != next)
      return Refuse(p.name() + " starts at shard " + std::to_string(p.manifest.part.first_shard) + ", but the parts "
                    "before it end at shard " + std::to_string(next) + ": the parts overlap or leave a gap");
    next += static_cast<uint32_t>(p.manifest.shards.shards.size());
  }
  if (next != a.manifest.part.total_shards)
    return Refuse("the parts cover " + std::to_string(next) + " shards of " +
                  std::to_string(a.manifest.part.total_shards));
  return Status::Ok();
}

}  // namespace

CommandOutcome MergeParts(const MergeOptions& options) {
  CommandOutcome out;
  std::vector<OpenPart> parts;
  std::map<std::string, std::string> seen;  // absolute path -> as given
  for (const std::string& d : options.parts) {
    fs::path abs = fs::absolute(d).lexically_normal();
    if (!abs.has_filename()) abs = abs.parent_path();  // "dir/" is "dir"
    auto [it, fresh] = seen.emplace(abs.string(), d);
    if (!fresh) {
      out.status = Refuse("'" + it->second + "' and '" + d +
                          "' are the same run directory, given twice: the parts overlap; give each part once");
      return out;
    }
  }
  for (const std::string& d : options.parts) {
    Result<OpenPart> p = OpenOnePart(d);
    if (!p.ok()) {
      out.status = p.status();
      return out;
    }
    parts.push_back(std::move(*p));
  }
  out.status = CheckParts(&parts);
  if (!out.status.ok()) return out;

  // The whole job's run directory: the full list, the first part's job copy.
  const OpenPart& first = parts.front();
  RunManifest whole = first.manifest;
  whole.part = PartOfRun{};
  whole.generation = 1;
  whole.slots.clear();
  whole.created_utc = NowIso();
  whole.shards.shards.clear();
  for (const OpenPart& p : parts)
    for (Shard s : p.manifest.shards.shards) {
      s.index = static_cast<uint32_t>(whole.shards.shards.size());
      whole.shards.shards.push_back(std::move(s));
    }
  if (ShardListDigest(whole.shards) != first.manifest.part.list_digest) {
    out.status = Refuse("the parts' shards together do not make the list they were cut from (list " +
                        ShardListDigest(whole.shards) + ", the parts say " + first.manifest.part.list_digest + ")");
    return out;
  }
  const std::string job_copy = (fs::path(first.dir->path()) / kJobCopyFile).string();
  Result<std::unique_ptr<Plan>> plan =
      LoadWorkerPlan(job_copy, whole.format, whole.fingerprint, fs::path(whole.job_path).parent_path().string(),
                     whole.plan_text);
  if (!plan.ok()) {
    out.status = Refuse(first.name() + ": " + plan.status().message());
    return out;
  }
  RunOptions o = options.run;
  out.status = ApplyOutputOption(o.output_path, &(*plan)->spec);
  if (!out.status.ok()) return out;
  o.run_dir = o.run_dir.empty() ? DefaultRunDir(whole.job_path) : o.run_dir;
  const std::string run_dir_abs = fs::absolute(o.run_dir).lexically_normal().string();
  for (const OpenPart& p : parts)
    if (p.dir->path() == run_dir_abs) {
      out.status = Refuse("the merged run directory '" + o.run_dir + "' is " + p.name() + "; choose another --run-dir");
      return out;
    }
  if (RunDirectory::Probe(run_dir_abs) != RunDirectory::State::kEmpty && !o.fresh) {
    out.status = Status::InvalidArgument("run directory '" + o.run_dir +
                                         "' already holds a run; to replace it with the merge: add --fresh (or "
                                         "choose another --run-dir)");
    return out;
  }
  Result<std::unique_ptr<RunDirectory>> dir = RunDirectory::Create(run_dir_abs, whole, o.fresh);
  if (!dir.ok()) {
    out.status = dir.status();
    return out;
  }
  std::string job_text;
  out.status = ReadWholeFile(job_copy, &job_text);
  if (out.status.ok()) out.status = (*dir)->WriteFile(kJobCopyFile, job_text);
  // Each part's partials under their global shard index, committed before
  // the merge reads them back.
  RunInput in;
  for (const OpenPart& p : parts) {
    for (const Shard& s : p.manifest.shards.shards) {
      if (!out.status.ok()) return out;
      std::string bytes;
      out.status = p.dir->LoadPartial(s.index, &bytes);
      const uint32_t global = p.manifest.part.first_shard + s.index;
      if (out.status.ok()) out.status = (*dir)->StagePartial(global, bytes);
      if (out.status.ok() && (*dir)->commit_due()) out.status = (*dir)->Commit();
      in.reused.push_back(global);
    }
  }
  if (out.status.ok()) out.status = (*dir)->Commit();
  if (!out.status.ok()) return out;
  if (!o.quiet)
    std::cerr << "fanfold: merged " << parts.size() << " parts (" << whole.shards.shards.size()
              << " shards) into run directory: " << o.run_dir << "\n";
  in.plan = plan->get();
  in.shards = &whole.shards;
  in.dir = dir->get();
  in.mode = "merge";
  return ExecuteRun(in, o);
}

}  // namespace fanfold
