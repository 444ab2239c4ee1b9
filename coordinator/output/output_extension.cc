#include "coordinator/output/output_extension.h"

#include <cctype>
#include <filesystem>

namespace fanfold {
namespace {

struct ExtensionRow {
  const char* extension;  // lower case, with the dot
  OutputFormat format;
};

constexpr ExtensionRow kExtensions[] = {
    {".csv", OutputFormat::kCsv},      {".json", OutputFormat::kJson},   {".ndjson", OutputFormat::kNdjson},
    {".jsonl", OutputFormat::kNdjson}, {".txt", OutputFormat::kTable},   {".table", OutputFormat::kTable},
};

}  // namespace

std::optional<OutputFormat> FormatForExtension(const std::string& path) {
  if (path.empty() || path == "-") return std::nullopt;
  std::string ext = std::filesystem::path(path).extension().string();
  for (char& ch : ext) ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
  for (const ExtensionRow& row : kExtensions)
    if (ext == row.extension) return row.format;
  return std::nullopt;
}

Result<OutputFormat> ChooseOutputFormat(const std::string& output_path, const EmitSpec& emit) {
  std::optional<OutputFormat> by_name = FormatForExtension(output_path);
  if (!by_name || *by_name == emit.format) return emit.format;
  if (!emit.format_given) return *by_name;
  return Status::InvalidArgument("-o " + output_path + ": the file name asks for \"" + OutputFormatName(*by_name) +
                                 "\" but the job's emit.format is \"" + OutputFormatName(emit.format) +
                                 "\"; change one of them, or choose a name without a known extension to write " +
                                 OutputFormatName(emit.format) + " there");
}

Status ApplyOutputOption(const std::string& output_path, JobSpec* spec) {
  if (!output_path.empty() && output_path != "-" && spec->reductions.size() > 1)
    return Status::InvalidArgument("-o " + output_path + ": the job has " + std::to_string(spec->reductions.size()) +
                                   " reductions, which cannot share one file; give each an emit.path in the job "
                                   "file, or use -o - to show them all on stdout");
  for (ReductionSpec& r : spec->reductions) {
    Result<OutputFormat> f = ChooseOutputFormat(output_path, r.emit);
    if (!f.ok()) return f.status();
    r.emit.format = *f;
  }
  return Status::Ok();
}

}  // namespace fanfold
