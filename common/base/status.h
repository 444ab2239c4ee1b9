// Status and Result<T>: errors as values, used by every layer of fanfold.
// A Status is either ok or carries a code and a human-readable message that
// already names the file, line or JSON location involved. Only main() turns a
// Status into an exit code (see common/base/exit_codes.h). Values; thread-compatible.
#pragma once

#include <cassert>
#include <string>
#include <utility>
#include <variant>

namespace fanfold {

class Status {
 public:
  enum class Code {
    kOk = 0,
    kInvalidArgument,  // bad job file, bad flag, bad expression
    kIoError,          // open/read/write failures, with the path
    kCorrupt,          // bad compressed data, bad partial state
    kLimitExceeded,    // a bounded measure ran past its configured bound
    kInterrupted,      // SIGINT/SIGTERM
    kInternal,         // a broken invariant; a bug in fanfold
  };

  Status() = default;
  static Status Ok() { return Status(); }
  static Status InvalidArgument(std::string m) { return Status(Code::kInvalidArgument, std::move(m)); }
  static Status IoError(std::string m) { return Status(Code::kIoError, std::move(m)); }
  static Status Corrupt(std::string m) { return Status(Code::kCorrupt, std::move(m)); }
  static Status LimitExceeded(std::string m) { return Status(Code::kLimitExceeded, std::move(m)); }
  static Status Interrupted(std::string m) { return Status(Code::kInterrupted, std::move(m)); }
  static Status Internal(std::string m) { return Status(Code::kInternal, std::move(m)); }

  bool ok() const { return code_ == Code::kOk; }
  Code code() const { return code_; }
  const std::string& message() const { return message_; }

  // Returns a copy whose message is "prefix: message". Ok stays ok.
  Status WithContext(const std::string& prefix) const {
    if (ok()) return *this;
    return Status(code_, prefix + ": " + message_);
  }

 private:
  Status(Code c, std::string m) : code_(c), message_(std::move(m)) {}
  Code code_ = Code::kOk;
  std::string message_;
};

// Result<T> holds either a T or a non-ok Status.
template <typename T>
class [[nodiscard]] Result {
 public:
  Result(T value) : v_(std::move(value)) {}  // NOLINT: implicit by design
  Result(Status s) : v_(std::move(s)) { assert(!std::get<Status>(v_).ok()); }  // NOLINT

  bool ok() const { return std::holds_alternative<T>(v_); }
  // REQUIRES: !ok()
  const Status& status() const { return std::get<Status>(v_); }
  // REQUIRES: ok()
  T& value() & { return std::get<T>(v_); }
  const T& value() const& { return std::get<T>(v_); }
  T&& value() && { return std::get<T>(std::move(v_)); }
  T* operator->() { return &value(); }
  const T* operator->() const { return &value(); }
  T& operator*() { return value(); }

 private:
  std::variant<T, Status> v_;
};

}  // namespace fanfold

// Propagates a non-ok Status from an expression returning Status.
#define FF_RETURN_IF_ERROR(expr)                  \
  do {                                            \
    ::fanfold::Status ff_status_ = (expr);        \
    if (!ff_status_.ok()) return ff_status_;      \
  } while (0)
