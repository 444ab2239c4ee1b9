#include "common/job/job_spec.h"

#include <filesystem>
#include <fstream>
#include <sstream>

#include <nlohmann/json.hpp>

#include "common/base/byte_size.h"
#include "common/job/job_checker.h"
#include "common/job/reduction_parser.h"
#include "common/base/json_document.h"
#include "common/base/json_location.h"
#include "common/base/json_syntax.h"
#include "common/base/nearest_names.h"
#include "common/measures/measure_registry.h"

namespace fanfold {
namespace {

using nlohmann::json;

Status ParseInputs(const JobChecker& c, const json& in, JobSpec* job) {
  const std::string p = "/inputs";
  if (!in.is_object()) return c.Error(p, FoundText(in), "an object with \"files\"");
  FF_RETURN_IF_ERROR(c.OnlyKeys(in, p, {"files", "format", "bad_record_limit", "chunk_bytes", "check_unread_values",
                                             "decode_ahead"}));
  if (!in.contains("files")) return c.Error(p, "no \"files\"", "\"files\": a list of paths or patterns");
  const json& files = in["files"];
  if (files.is_string()) return c.Error(p + "/files", FoundText(files), "an array of strings (wrap it in [ ])");
  if (!files.is_array() || files.empty()) return c.Error(p + "/files", FoundText(files), "a non-empty array of strings");
  for (size_t i = 0; i < files.size(); ++i) {
    std::string f;
    FF_RETURN_IF_ERROR(c.String(files[i], ChildPointer(p + "/files", i), &f));
    job->files.push_back(f);
  }
  if (in.contains("format")) {
    std::string f;
    FF_RETURN_IF_ERROR(c.String(in["format"], p + "/format", &f));
    RecordFormat fmt;
    if (!FormatFromText(f, &fmt)) {
      std::vector<std::string> names;
      for (const RecordFormatRow& row : RecordFormatRows()) names.push_back(row.name);
      const std::string near = DidYouMean(f, names, Quoted);
      return c.Error(p + "/format", near.empty() ? FoundText(in["format"]) : "unknown format " + Quoted(f) + near,
                     FormatNameList());
    }
    job->format = fmt;
  }
  if (in.contains("bad_record_limit")) {
    double d = 0;
    FF_RETURN_IF_ERROR(c.Number(in["bad_record_limit"], p + "/bad_record_limit", 0, 1, false, &d));
    job->bad_record_limit = d;
  }
  if (in.contains("chunk_bytes")) {
    FF_RETURN_IF_ERROR(c.Integer(in["chunk_bytes"], p + "/chunk_bytes", 1 << 16, uint64_t{1} << 40, &job->chunk_bytes));
  }
  if (const auto v = in.find("check_unread_values"); v != in.end()) {
    if (!v->is_boolean()) return c.Error(p + "/check_unread_values", FoundText(*v), "true or false");
    job->check_unread_values = v->get<bool>();
  }
  if (const auto v = in.find("decode_ahead"); v != in.end()) {
    const std::string text = v->is_string() ? v->get<std::string>() : "";
    if (text == "auto") job->decode_ahead = AheadChoice::kAuto;
    else if (text == "on") job->decode_ahead = AheadChoice::kOn;
    else if (text == "off") job->decode_ahead = AheadChoice::kOff;
    else return c.Error(p + "/decode_ahead", FoundText(*v), "\"auto\", \"on\" or \"off\"");
  }
  return Status::Ok();
}

}  // namespace

Result<JobSpec> ParseJobSpec(std::string_view text, const std::string& job_path) {
  json doc = json::parse(text, nullptr, /*allow_exceptions=*/false, /*ignore_comments=*/false);
  if (doc.is_discarded()) {
    const std::string problem = JsonSyntaxProblem(text);
    return Status::InvalidArgument(job_path + ": not valid JSON" +
                                   (problem.empty() ? " (the JSON reader refused it)" : problem));
  }
  JobChecker c(job_path);
  JobSpec job;
  job.job_path = job_path;
  std::filesystem::path base = std::filesystem::path(job_path).parent_path();
  job.base_dir = base.empty() ? "." : base.string();
  if (!doc.is_object()) return c.Error("", FoundText(doc), "a JSON object with \"inputs\" and \"measures\"");
  FF_RETURN_IF_ERROR(
      c.OnlyKeys(doc, "", {"about", "inputs", "tables", "keep", "derive", "reductions", "group", "measures", "rows", "emit",
                          "memory_cap"}));
  if (doc.contains("about")) FF_RETURN_IF_ERROR(c.String(doc["about"], "/about", &job.about, false));
  if (const auto v = doc.find("memory_cap"); v != doc.end()) {
    std::optional<uint64_t> cap;
    if (v->is_number_unsigned()) cap = v->get<uint64_t>();
    else if (v->is_string()) cap = ParseByteSize(v->get<std::string>());
    if (!cap || *cap == 0) return c.Error("/memory_cap", FoundText(*v), std::string("a positive byte count: ") + kByteSizeExpected);
    job.memory_cap = cap;
  }
  if (!doc.contains("inputs")) return c.Error("", "no \"inputs\"", "\"inputs\": {\"files\": [...]}");
  FF_RETURN_IF_ERROR(ParseInputs(c, doc["inputs"], &job));
  if (doc.contains("tables")) FF_RETURN_IF_ERROR(ParseTableSpecs(doc["tables"], job_path, &job.tables));
  if (doc.contains("keep")) FF_RETURN_IF_ERROR(c.String(doc["keep"], "/keep", &job.keep));
  if (doc.contains("derive")) FF_RETURN_IF_ERROR(ParseDerive(c, doc["derive"], "/derive", &job.derive));
  if (doc.contains("reductions")) {
    // Several named reductions: what one reduction says at the top level
    // belongs inside each of them.
    for (const char* key : {"group", "measures", "rows", "emit"})
      if (doc.contains(key))
        return c.Error(ChildPointer("", key), Quoted(key) + " beside \"reductions\"",
                       std::string("\"").append(key).append("\" inside each reduction of \"reductions\""));
    FF_RETURN_IF_ERROR(ParseReductions(c, doc["reductions"], &job.reductions));
  } else {
    if (!doc.contains("measures"))
      return c.Error("", "no \"measures\"", "\"measures\": a list of measures (or \"reductions\")");
    ReductionSpec one;
    FF_RETURN_IF_ERROR(ParseReductionBody(c, doc, &one));
    job.reductions.push_back(std::move(one));
  }
  return job;
}

Result<JobSpec> LoadJobSpec(const std::string& path) {
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec))
    return Status::InvalidArgument("cannot read job file '" + path + "': it is a directory; expected a JSON file");
  std::ifstream in(path, std::ios::binary);
  if (!in) return Status::InvalidArgument("cannot read job file '" + path + "'");
  std::stringstream ss;
  ss << in.rdbuf();
  Result<JobSpec> spec = ParseJobSpec(ss.str(), path);
  if (spec.ok()) spec->source_text = ss.str();
  return spec;
}

const char* MeasureFnName(MeasureKind kind) { return MeasureRowOf(kind).fn; }

const char* OutputFormatName(OutputFormat f) {
  switch (f) {
    case OutputFormat::kCsv: return "csv";
    case OutputFormat::kJson: return "json";
    case OutputFormat::kNdjson: return "ndjson";
    case OutputFormat::kTable: return "table";
  }
  return "?";
}

}  // namespace fanfold
