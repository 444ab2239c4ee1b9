// Tests for the plan fingerprint's measure part: it keeps the text plans had
// before measure options had one home, and every option of every measure
// changes it (so `resume` never mixes partials computed with other options).
#include <doctest/doctest.h>

#include <fstream>
#include <string>
#include <type_traits>
#include <variant>

#include "common/base/format_version.h"
#include "common/job/plan.h"
#include "common/measures/measure_options.h"
#include "common/measures/measure_registry.h"

using namespace fanfold;

namespace {

std::unique_ptr<Plan> CompileSpec(JobSpec spec) {
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(spec), RecordFormat::kNdjson);
  REQUIRE(plan.ok());
  return std::move(plan.value());
}

// A job with one measure of row's fn and its required options set.
JobSpec OneMeasureJob(const MeasureRow& row) {
  std::string m = std::string(R"({"name": "m", "fn": ")") + row.fn + "\"";
  if (row.arg_count >= 1) m += R"(, "of": "{/x}")";
  if (row.arg_count >= 2) m += R"(, "by": "{/t}")";
  if (row.Takes("at")) m += R"(, "at": [0.5])";
  if (row.Takes("edges")) m += R"(, "edges": [0, 1])";
  Result<JobSpec> spec = ParseJobSpec(R"({"inputs": {"files": ["a"]}, "measures": [)" + m + "}]}", "job.json");
  REQUIRE(spec.ok());
  return spec.value();
}

// Sets option o of *c to the low (which = 0) or high end of its range.
void SetOption(const MeasureOption& o, int which, MeasureConfig* c) {
  std::visit(
      [&](auto field) {
        using T = std::remove_cvref_t<decltype(c->*field)>;
        const double v = which == 0 ? o.lo : o.hi;
        if constexpr (std::is_same_v<T, std::vector<double>>) c->*field = {v};
        else c->*field = static_cast<T>(v);
      },
      o.field);
}

// Two valid job-file values of option o that differ: the top of its range
// and a value just inside it (valid for every row, top's limit >= k too).
std::string OptionJson(const MeasureOption& o, int which) {
  return std::visit(
      [&](auto field) -> std::string {
        using T = std::remove_cvref_t<decltype(MeasureConfig().*field)>;
        if constexpr (std::is_same_v<T, std::vector<double>>) {
          // Two elements, increasing (histogram edges need that), the last one differing.
          return std::string("[").append(std::to_string(o.lo)).append(", ")
              .append(std::to_string(which == 0 ? (o.lo + o.hi) / 2 : o.hi)).append("]");
        } else if constexpr (std::is_same_v<T, double>) {
          return std::to_string(which == 0 ? (o.lo + o.hi) / 2 : o.hi);
        } else {
          return std::to_string(static_cast<uint64_t>(o.hi) - (which == 0 ? 1 : 0));
        }
      },
      o.field);
}

}  // namespace

// Intent: the canonical text keeps its layout, so a fingerprint changes only
// when the work changes. The text below is what the hand-listed
// PlanCanonicalText of commit 3e10f86 produced for this job, with the measure
// names of our own (ddsketch, hyperloglog, at_lowest) that replaced the old
// ones, since codec 4 the reduction's lines indented under "reduction",
// and the "values=read" line that came with the NDJSON reader's default of
// checking only the values fields read (it changed which lines are
// malformed, so earlier run directories must not resume); the fingerprint
// is pinned from that text.
TEST_CASE("the canonical text of a plan is the one earlier versions wrote") {
  Result<JobSpec> spec = ParseJobSpec(R"J({"inputs": {"files": ["a"]}, "keep": "{/x} > 1",
    "derive": [{"name": "d", "expr": "{/y} * 2"}], "group": ["{/g}"], "measures": [
    {"name": "n", "fn": "count"},
    {"name": "lat", "fn": "quantile", "of": "{/l}", "at": [0.5, 0.999], "limit": 5000},
    {"name": "alat", "fn": "ddsketch", "of": "d", "at": [0.1], "alpha": 0.02},
    {"name": "u", "fn": "hyperloglog", "of": "{/u}", "precision": 14},
    {"name": "t", "fn": "top", "of": "{/u}", "k": 3, "limit": 50},
    {"name": "f", "fn": "at_lowest", "of": "{/u}", "by": "{/ts}"}]})J",
                                      "job.json");
  REQUIRE(spec.ok());
  auto plan = CompileSpec(spec.value());
  CHECK(PlanCanonicalText(*plan) ==
        "fanfold-plan codec=4\n"
        "format=ndjson\n"
        "values=read\n"
        "keep={/x} > 1\n"
        "derive d={/y} * 2\n"
        "reduction\n"
        " keep=\n"
        " group {/g}\n"
        " measure n fn=count of= by= alpha=0.01 precision=12 k=10 limit=1000000 at=\n"
        " measure lat fn=quantile of={/l} by= alpha=0.01 precision=12 k=10 limit=5000 at=0.5,0.999,\n"
        " measure alat fn=ddsketch of=d by= alpha=0.02 precision=12 k=10 limit=1000000 "
        "at=0.10000000000000001,\n"
        " measure u fn=hyperloglog of={/u} by= alpha=0.01 precision=14 k=10 limit=1000000 at=\n"
        " measure t fn=top of={/u} by= alpha=0.01 precision=12 k=3 limit=50 at=\n"
        " measure f fn=at_lowest of={/u} by={/ts} alpha=0.01 precision=12 k=10 limit=1000000 at=\n");
  CHECK(plan->fingerprint == 0x7961bfba0454f47fULL);  // XXH3-64 of the text above (codec 4)
}

// Intent: for every measure and every option of MeasureConfig (those the
// measure ignores too), two configs that differ only in that option give two
// fingerprints. Together with the static_assert in measure_options.cc (every
// config field has an option row) no option can be left out of the text.
TEST_CASE("changing any option of any measure changes the plan fingerprint") {
  for (const MeasureRow& row : MeasureRows()) {
    for (const MeasureOption& o : kMeasureOptions) {
      INFO("fn " << std::string(row.fn) << ", option " << std::string(o.key));
      JobSpec low = OneMeasureJob(row);
      JobSpec high = low;
      SetOption(o, 0, &low.reductions[0].measures[0].config);
      SetOption(o, 1, &high.reductions[0].measures[0].config);
      CHECK(CompileSpec(low)->fingerprint != CompileSpec(high)->fingerprint);
    }
  }
}

// Intent: the same through the job file, for each option a measure takes:
// what the parser reads reaches the fingerprint.
TEST_CASE("each option written in the job file changes the plan fingerprint") {
  int checked = 0;
  for (const MeasureRow& row : MeasureRows()) {
    for (const MeasureOption& o : kMeasureOptions) {
      if (!row.Takes(o.key)) continue;
      INFO("fn " << std::string(row.fn) << ", option " << std::string(o.key));
      uint64_t fingerprints[2];
      for (int which : {0, 1}) {
        std::string m = std::string(R"({"name": "m", "fn": ")") + row.fn + "\"";
        if (row.arg_count >= 1) m += R"(, "of": "{/x}")";
        if (row.arg_count >= 2) m += R"(, "by": "{/t}")";
        if (row.Takes("at") && std::string(o.key) != "at") m += R"(, "at": [0.5])";
        const std::string key = o.key;
        if (key == "from" || key == "to" || key == "width") {
          // histogram by width: the other two fixed, this one at two valid values.
          const char* kBins[][2] = {{"from", "0"}, {"to", "10"}, {"width", "1"}};
          const char* kOther[][2] = {{"from", "-10"}, {"to", "20"}, {"width", "2"}};
          for (const auto& kv : kBins) {
            const bool varied = key == kv[0];
            const char* value = varied && which == 1 ? kOther[&kv - kBins][1] : kv[1];
            m += std::string(", \"") + kv[0] + "\": " + value;
          }
        } else {
          m += std::string(", \"") + o.key + "\": " + OptionJson(o, which);
        }
        Result<JobSpec> spec =
            ParseJobSpec(R"({"inputs": {"files": ["a"]}, "measures": [)" + m + "}]}", "job.json");
        REQUIRE_MESSAGE(spec.ok(), spec.status().message());
        fingerprints[which] = CompileSpec(spec.value())->fingerprint;
      }
      CHECK(fingerprints[0] != fingerprints[1]);
      ++checked;
    }
  }
  CHECK(checked == 12);  // at x2, limit x3, alpha, precision, k, edges, from, to, width: the options the rows take
}

// Intent: the codec version is read back from a plan text's first line (the
// current one from a compiled plan, older ones from run.json of earlier
// versions), and text without that line names none.
TEST_CASE("the codec version of a plan text") {
  Result<JobSpec> spec =
      ParseJobSpec(R"J({"inputs": {"files": ["a"]}, "measures": [{"name": "n", "fn": "count"}]})J", "job.json");
  REQUIRE(spec.ok());
  auto plan = CompileSpec(spec.value());
  CHECK(PlanTextCodecVersion(PlanCanonicalText(*plan)) == kPartialFormatVersion);
  CHECK(PlanTextCodecVersion("fanfold-plan codec=2\nformat=ndjson\n") == 2);
  CHECK(PlanTextCodecVersion("fanfold-plan codec=\n") == -1);
  CHECK(PlanTextCodecVersion("fanfold-plan codec=2") == -1);
  CHECK(PlanTextCodecVersion("format=ndjson\n") == -1);
}

TEST_CASE("shown_digits is for display only: the fingerprint ignores it") {
  // Intent: a measure's shown_digits rounds what the user reads, not what is
  // computed, so changing it must not change the plan (resume reuses partials).
  auto plan_of = [](const char* measure) {
    Result<JobSpec> spec =
        ParseJobSpec(std::string(R"({"inputs": {"files": ["a"]}, "measures": [)") + measure + "]}", "job.json");
    REQUIRE(spec.ok());
    return CompileSpec(spec.value());
  };
  const auto plain = plan_of(R"({"name": "m", "fn": "mean", "of": "{/x}"})");
  const auto three = plan_of(R"({"name": "m", "fn": "mean", "of": "{/x}", "shown_digits": 3})");
  CHECK(three->spec.reductions[0].measures[0].shown_digits == 3);
  CHECK(plain->fingerprint == three->fingerprint);
  CHECK(PlanCanonicalText(*plain) == PlanCanonicalText(*three));
}

// Intent: a measure's "only" filter changes what the measure computes, so it
// is part of the fingerprint (resume never reuses a partial computed with
// another filter); without it the text is the one earlier versions wrote.
TEST_CASE("a measure's only filter is part of the plan fingerprint") {
  auto plan_of = [](const char* measure) {
    Result<JobSpec> spec =
        ParseJobSpec(std::string(R"({"inputs": {"files": ["a"]}, "measures": [)") + measure + "]}", "job.json");
    REQUIRE(spec.ok());
    return CompileSpec(spec.value());
  };
  const auto plain = plan_of(R"({"name": "m", "fn": "sum", "of": "{/x}"})");
  const auto faults = plan_of(R"({"name": "m", "fn": "sum", "of": "{/x}", "only": "{/e} == 'fault'"})");
  const auto reboots = plan_of(R"({"name": "m", "fn": "sum", "of": "{/x}", "only": "{/e} == 'reboot'"})");
  CHECK(plain->fingerprint != faults->fingerprint);
  CHECK(faults->fingerprint != reboots->fingerprint);
  const std::string text = PlanCanonicalText(*faults);
  CHECK(text.substr(text.find("measure m")) ==
        "measure m fn=sum of={/x} by= alpha=0.01 precision=12 k=10 limit=1000000 at= only={/e} == 'fault'\n");
  CHECK(PlanCanonicalText(*plain).find("only=") == std::string::npos);
}

// Intent: the histogram's options reach the canonical text only when set,
// after the options every plan has, so plans without a histogram keep
// their text (pinned above) and one with a histogram names its bins.
TEST_CASE("the canonical text of a histogram names its bins") {
  Result<JobSpec> spec = ParseJobSpec(R"J({"inputs": {"files": ["a"]}, "measures": [
    {"name": "e", "fn": "histogram", "of": "{/x}", "edges": [0, 2.5, 10]},
    {"name": "w", "fn": "histogram", "of": "{/x}", "from": 0, "to": 1, "width": 0.1}]})J",
                                      "job.json");
  REQUIRE(spec.ok());
  const std::string text = PlanCanonicalText(*CompileSpec(spec.value()));
  CHECK(text.find("measure e fn=histogram of={/x} by= alpha=0.01 precision=12 k=10 limit=1000000 at= "
                  "edges=0,2.5,10,\n") != std::string::npos);
  CHECK(text.find("measure w fn=histogram of={/x} by= alpha=0.01 precision=12 k=10 limit=1000000 from=0 to=1 "
                  "width=0.10000000000000001 at=\n") != std::string::npos);
}

// Intent: "check_unread_values" changes which NDJSON lines are malformed, so
// it is in the fingerprint; for CSV it changes nothing, and neither does the
// text of a CSV plan (no "values=" line).
TEST_CASE("check_unread_values is part of an NDJSON plan's fingerprint") {
  auto plan_of = [](const char* inputs_extra, RecordFormat format) {
    Result<JobSpec> spec = ParseJobSpec(std::string(R"({"inputs": {"files": ["a"])") + inputs_extra +
                                            R"(}, "measures": [{"name": "n", "fn": "count"}]})",
                                        "job.json");
    REQUIRE(spec.ok());
    Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(spec.value()), format);
    REQUIRE(plan.ok());
    return std::move(plan.value());
  };
  const auto plain = plan_of("", RecordFormat::kNdjson);
  const auto off = plan_of(R"(, "check_unread_values": false)", RecordFormat::kNdjson);
  const auto on = plan_of(R"(, "check_unread_values": true)", RecordFormat::kNdjson);
  CHECK(on->spec.check_unread_values);
  CHECK(plain->fingerprint == off->fingerprint);
  CHECK(plain->fingerprint != on->fingerprint);
  CHECK(PlanCanonicalText(*on).find("\nvalues=every\n") != std::string::npos);
  const auto csv_off = plan_of("", RecordFormat::kCsv);
  const auto csv_on = plan_of(R"(, "check_unread_values": true)", RecordFormat::kCsv);
  CHECK(csv_off->fingerprint == csv_on->fingerprint);
  CHECK(PlanCanonicalText(*csv_on).find("values=") == std::string::npos);
  Result<JobSpec> bad = ParseJobSpec(R"({"inputs": {"files": ["a"], "check_unread_values": "yes"},
    "measures": [{"name": "n", "fn": "count"}]})", "job.json");
  REQUIRE(!bad.ok());
  CHECK(bad.status().message().find("/inputs/check_unread_values") != std::string::npos);
}

// Intent: "decode_ahead" says how workers decompress, never what they
// compute: parsed, refused when misspelled, and outside the fingerprint.
TEST_CASE("decode_ahead is parsed and stays out of the fingerprint") {
  auto plan_of = [](const char* inputs_extra) {
    Result<JobSpec> spec = ParseJobSpec(std::string(R"({"inputs": {"files": ["a"])") + inputs_extra +
                                            R"(}, "measures": [{"name": "n", "fn": "count"}]})",
                                        "job.json");
    REQUIRE(spec.ok());
    Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(spec.value()), RecordFormat::kNdjson);
    REQUIRE(plan.ok());
    return std::move(plan.value());
  };
  const auto plain = plan_of("");
  const auto on = plan_of(R"(, "decode_ahead": "on")");
  const auto off = plan_of(R"(, "decode_ahead": "off")");
  CHECK(plain->spec.decode_ahead == AheadChoice::kAuto);
  CHECK(on->spec.decode_ahead == AheadChoice::kOn);
  CHECK(off->spec.decode_ahead == AheadChoice::kOff);
  CHECK(plain->fingerprint == on->fingerprint);
  CHECK(plain->fingerprint == off->fingerprint);
  Result<JobSpec> bad = ParseJobSpec(R"({"inputs": {"files": ["a"], "decode_ahead": true},
    "measures": [{"name": "n", "fn": "count"}]})", "job.json");
  REQUIRE(!bad.ok());
  CHECK(bad.status().message().find("/inputs/decode_ahead") != std::string::npos);
  CHECK(bad.status().message().find("\"auto\", \"on\" or \"off\"") != std::string::npos);
}

// The first line of tzdata's source file names its release ("# version
// 2025b"; the tz project's tzdata.zi, installed by Debian's tzdata package).
std::string TzdataVersion() {
  std::ifstream in("/usr/share/zoneinfo/tzdata.zi");
  std::string line;
  if (!std::getline(in, line) || line.rfind("# version ", 0) != 0) return "";
  return line.substr(10);
}

// Intent: a plan whose expressions read a zone's rules is tied to the tz
// database release (partials made under other rules are recomputed); plans
// in UTC keep their text.
TEST_CASE("plan fingerprint: the tz database release when a zone is read") {
  auto plan_of = [](const std::string& derive) {
    Result<JobSpec> spec = ParseJobSpec(R"({"inputs": {"files": ["a"]}, "derive": [{"name": "h", "expr": ")" +
                                            derive + R"("}], "group": ["h"], "measures": [{"name": "n", "fn": "count"}]})",
                                        "job.json");
    REQUIRE(spec.ok());
    return CompileSpec(std::move(spec.value()));
  };
  const std::string utc = PlanCanonicalText(*plan_of("clock_hour(time({/ts}))"));
  const std::string zoned = PlanCanonicalText(*plan_of("clock_hour(time({/ts}), 'Europe/Berlin')"));
  CHECK(utc.find("tzdb=") == std::string::npos);
  const std::string release = TzdataVersion();
  if (release.empty()) {
    MESSAGE("no /usr/share/zoneinfo/tzdata.zi to compare the release with");
    CHECK(zoned.find("tzdb=") != std::string::npos);
  } else {
    CHECK(zoned.find("\ntzdb=" + release + "\n") != std::string::npos);
  }
}
