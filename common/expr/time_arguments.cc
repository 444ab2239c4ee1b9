#include "common/expr/time_arguments.h"

#include <string>

#include "common/base/nearest_names.h"

namespace fanfold {
namespace {

constexpr const char* kUnits = "one of 'minute', 'hour', 'day', 'week', 'month'";
constexpr const char* kLengths = "a length such as '15 minutes', '6 hours' or '2 days'";
constexpr const char* kZones = "an IANA time zone name such as 'Europe/Berlin'";

Status ErrorAt(int column, const std::string& found, const std::string& expected) {
  return Status::InvalidArgument("column " + std::to_string(column) + ": " + found +
                                 "; expected " + expected);
}

std::string Quote(std::string_view s) { return std::string("'").append(s).append("'"); }

Status ReadUnit(const AstNode& arg, bool from_epoch, TimeBucket* time) {
  const char* expected = from_epoch ? kLengths : kUnits;
  if (arg.kind != AstKind::kString)
    return ErrorAt(arg.column, from_epoch ? "a length that is not a string literal"
                                          : "a unit that is not a string literal",
                   expected);
  time->from_epoch = from_epoch;
  TimeBucket::UnitError error;
  if (time->ParseUnit(arg.text, &error)) return Status::Ok();
  if (!error.found.empty()) return ErrorAt(arg.column, error.found, error.expected);
  return ErrorAt(arg.column,
                 "unit '" + arg.text + "'" +
                     DidYouMean(arg.text, {"minute", "hour", "day", "week", "month"}, Quote),
                 expected);
}

Status ReadZone(const AstNode& arg, TimeBucket* time) {
  if (arg.kind != AstKind::kString)
    return ErrorAt(arg.column, "a time zone that is not a string literal", kZones);
  if (TimeZone::Find(arg.text, &time->zone)) return Status::Ok();
  if (TimeZone::Names().empty())
    return ErrorAt(arg.column, "time zone '" + arg.text + "' but no readable tz database on this system",
                   "the tzdata package installed");
  return ErrorAt(arg.column,
                 "unknown time zone '" + arg.text + "'" + DidYouMean(arg.text, TimeZone::Names(), Quote),
                 kZones);
}

}  // namespace

bool TakesTimeArguments(ExprFunction function) {
  return function == ExprFunction::kPeriodStart || function == ExprFunction::kSpanStart ||
         function == ExprFunction::kClockHour || function == ExprFunction::kWeekday;
}

Status ReadTimeArguments(const AstNode& call, ExprFunction function, TimeBucket* time) {
  size_t next = 1;
  if (function == ExprFunction::kPeriodStart || function == ExprFunction::kSpanStart) {
    FF_RETURN_IF_ERROR(ReadUnit(call.kids[1], function == ExprFunction::kSpanStart, time));
    next = 2;
  }
  if (call.kids.size() > next) FF_RETURN_IF_ERROR(ReadZone(call.kids[next], time));
  return Status::Ok();
}

}  // namespace fanfold
