// OutputExtension: which result format an output file's name asks for
// (".csv", ".json", ".ndjson"/".jsonl", ".txt"/".table", any letter case)
// and the format a run writes once `-o FILE` and the job's emit.format are
// both known. Pure functions; thread-safe.
#pragma once

#include <optional>
#include <string>

#include "common/base/status.h"
#include "common/job/job_spec.h"

namespace fanfold {

// The format FILE's extension names, or nullopt (no extension, an unknown
// one, "" or "-" for stdout).
std::optional<OutputFormat> FormatForExtension(const std::string& path);

// The format of the result written to output_path (the -o value; "" = none):
// the extension's when it names one and the job set no emit.format or the
// same one; the job's otherwise. A known extension that disagrees with an
// emit.format the job sets is a usage error naming both.
Result<OutputFormat> ChooseOutputFormat(const std::string& output_path, const EmitSpec& emit);

// Sets every reduction's emit.format for a run with -o output_path (as
// ChooseOutputFormat). A file (not "" or "-") for a job of several
// reductions is a usage error: they cannot share one file.
Status ApplyOutputOption(const std::string& output_path, JobSpec* spec);

}  // namespace fanfold
