// FieldTable: the numbered slots a record is evaluated in. Raw fields are
// what a reader extracts (a JSON Pointer such as "/user/id" for NDJSON, a
// column name for CSV/TSV); derived fields are named expressions evaluated in
// job-file order after the reader has filled the raw slots. Built once while
// the plan is compiled, then read-only; safe to share between threads after.
#pragma once

#include <string>
#include <string_view>
#include <vector>

namespace fanfold {

class FieldTable {
 public:
  struct Slot {
    bool derived = false;
    std::string name;  // raw: the reference text; derived: the field's name
    // A derived field out of scope (HideDerived): it keeps its slot, but
    // names no longer find it.
    bool hidden = false;
  };

  // Returns the slot of raw field `ref`, adding it on first use.
  int InternField(std::string_view ref) {
    for (size_t i = 0; i < slots_.size(); ++i)
      if (!slots_[i].derived && slots_[i].name == ref) return static_cast<int>(i);
    slots_.push_back(Slot{false, std::string(ref)});
    return static_cast<int>(slots_.size() - 1);
  }

  // Adds derived field `name`; returns its slot, or -1 iff the name is taken.
  int AddDerived(std::string_view name) {
    if (FindDerived(name) >= 0) return -1;
    slots_.push_back(Slot{true, std::string(name)});
    return static_cast<int>(slots_.size() - 1);
  }

  // Returns the slot of derived field `name` in scope, or -1 iff there is none.
  int FindDerived(std::string_view name) const {
    for (size_t i = 0; i < slots_.size(); ++i)
      if (slots_[i].derived && !slots_[i].hidden && slots_[i].name == name) return static_cast<int>(i);
    return -1;
  }

  // Takes derived slot `slot` out of scope: FindDerived no longer finds it
  // and AddDerived may reuse its name (a reduction's own derived fields are
  // hidden from the reductions after it). REQUIRES: slot is derived.
  void HideDerived(int slot) { slots_[static_cast<size_t>(slot)].hidden = true; }

  size_t size() const { return slots_.size(); }
  const Slot& slot(size_t i) const { return slots_[i]; }
  const std::vector<Slot>& slots() const { return slots_; }

 private:
  std::vector<Slot> slots_;
};

}  // namespace fanfold
