// SameStateMerge<State>: Merge and MergeEncoded for a small state whose merge
// is plain arithmetic on another state of its own class (count, sum,
// moments). MergeEncoded decodes into a local State — no heap, no virtual
// calls — which is what keeps the coordinator's merge of these fast.
// State provides (all non-virtual):
//   static constexpr const char* kLabel;      // for messages, e.g. "sum"
//   State EmptyLike() const;                  // an empty state, same config
//   bool SameConfig(const State& o) const;    // true iff o may merge in
//   void MergeSame(const State& o);           // Merge's arithmetic
// Single-threaded, like every state.
#pragma once

#include <string>

#include "common/measures/measure.h"

namespace fanfold {

template <class State>
class SameStateMerge : public MeasureState {
 public:
  Status Merge(const MeasureState& other) final {
    const auto* o = dynamic_cast<const State*>(&other);
    if (o == nullptr || !self().SameConfig(*o))
      return Status::Internal(std::string(State::kLabel) + ": merge with a state of another measure");
    self().MergeSame(*o);
    return Status::Ok();
  }

  Status MergeEncoded(ByteReader& r, bool apply, MeasureState* /*scratch*/) final {
    State later = self().EmptyLike();
    FF_RETURN_IF_ERROR(later.Decode(r));
    if (apply) self().MergeSame(later);
    return Status::Ok();
  }

 private:
  State& self() { return static_cast<State&>(*this); }
};

}  // namespace fanfold
