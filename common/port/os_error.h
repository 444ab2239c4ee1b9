// ErrnoText and OsError: the one place where an errno value becomes text for
// a Status message ("No such file or directory"). Every other file builds its
// message from these, so the wording is the same everywhere. OsError is what
// the Platform seam (common/port/platform.h) returns: an errno value and the
// system call that gave it, turned into a Status by the caller, which knows
// what it was doing. Values; thread-safe.
#pragma once

#include <string>
#include <string_view>

#include "common/base/status.h"

namespace fanfold {

// Returns the system's description of errno value `err` (never empty).
std::string ErrnoText(int err);

// Status::IoError("cannot <what> '<path>': <ErrnoText(err)>"), the wording of
// every file error in fanfold.
Status IoFailure(std::string_view what, const std::string& path, int err);

// The outcome of one operating-system call: ok, or an errno value and the
// name of the call that failed ("open", "fsync", ...).
class [[nodiscard]] OsError {
 public:
  OsError() = default;
  static OsError Ok() { return OsError(); }
  // REQUIRES: err != 0; call is a string literal.
  static OsError Of(const char* call, int err) { return OsError(call, err); }

  bool ok() const { return err_ == 0; }
  int code() const { return err_; }
  // The failed call's name, or "" when ok.
  const char* call() const { return call_; }
  // IoFailure(what, path, code()); Ok when ok().
  Status ToStatus(std::string_view what, const std::string& path) const;
  // IoFailure(call(), path, code()): "cannot fsync '<path>': ...".
  Status ToStatus(const std::string& path) const { return ToStatus(call_, path); }

 private:
  OsError(const char* call, int err) : call_(call), err_(err) {}
  const char* call_ = "";
  int err_ = 0;
};

}  // namespace fanfold
