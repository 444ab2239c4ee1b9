// The parsers of a job file's reductions: the part that says what to group by,
// what to compute and what to print — keep, derive, group, measures, rows and
// emit — either at the top level (a job of one unnamed reduction) or as the
// objects of "reductions" (several named ones over one read). Errors name the
// JSON Pointer of the value at fault (JobChecker). Pure functions.
#pragma once

#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "common/base/status.h"
#include "common/job/job_checker.h"
#include "common/job/job_spec.h"

namespace fanfold {

// {"name": ..., "expr": ...} at p (a derived field or an added column);
// with digits non-null, also an optional "shown_digits" into *digits.
Status ParseNamedExpr(const JobChecker& c, const nlohmann::json& v, const std::string& p, const char* name_text,
                      int* digits, std::string* name, std::string* expr);

// An array of derived fields at p, appended to *out.
Status ParseDerive(const JobChecker& c, const nlohmann::json& d, const std::string& p, std::vector<DeriveSpec>* out);

// The reduction keys of obj (keep, derive, group, measures — required —,
// rows, emit) into *r, whose pointer names obj. At the top level (pointer
// "") keep and derive are the job's and are left alone. Other keys are the
// caller's to refuse.
Status ParseReductionBody(const JobChecker& c, const nlohmann::json& obj, ReductionSpec* r);

// "reductions": a non-empty array of objects, each with a unique "name"
// (letters, digits, '_', '-'; at most 64) and ParseReductionBody's keys.
Status ParseReductions(const JobChecker& c, const nlohmann::json& list, std::vector<ReductionSpec>* out);

}  // namespace fanfold
