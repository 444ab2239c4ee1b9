#include "common/measures/sketches/hyperloglog.h"

#include <algorithm>
#include <cmath>
#include <limits>

namespace fanfold {
namespace {

// Heule, Nunkesser & Hall (2013): below these cardinalities linear counting
// beats the HyperLogLog estimate, for p = 4..18.
constexpr double kLinearCountingThreshold[] = {
    10, 20, 40, 80, 220, 400, 900, 1800, 3100, 6500, 11500, 20000, 50000, 120000, 350000};

// Ertl (2017, arXiv:1702.01284), "improved raw estimator": the raw
// HyperLogLog estimate is badly biased between about 0.7m and 5m (+30% at
// n = m; measured, see docs/measures.md). Heule et al. remove that bias with
// empirical tables; Ertl's closed form needs none. alpha_inf = 1/(2 ln 2).
constexpr double kAlphaInfinity = 0.7213475204444817;

// sigma(x) = x + sum_{k>=1} x^(2^k) 2^(k-1), for x = share of empty registers.
double Sigma(double x) {
  if (x >= 1) return std::numeric_limits<double>::infinity();
  double y = 1, z = x, previous;
  do {
    x *= x;
    previous = z;
    z += x * y;
    y += y;
  } while (z != previous);
  return z;
}

// tau(x) = (1 - x - sum_{k>=1} (1 - x^(2^-k))^2 2^-k) / 3, for x = share of
// registers below the maximum rank.
double Tau(double x) {
  if (x <= 0 || x >= 1) return 0;
  double y = 1, z = 1 - x, previous;
  do {
    x = std::sqrt(x);
    previous = z;
    y *= 0.5;
    z -= (1 - x) * (1 - x) * y;
  } while (z != previous);
  return z / 3;
}

}  // namespace

HyperLogLogState::HyperLogLogState(const MeasureConfig& config)
    : p_(std::clamp(config.precision, 4, 18)) {}

void HyperLogLogState::Densify() {
  registers_.assign(size_t{1} << p_, 0);
  for (uint32_t e : sparse_) registers_[e >> 8] = static_cast<uint8_t>(e & 0xff);
  std::vector<uint32_t>().swap(sparse_);
}

std::vector<uint8_t> HyperLogLogState::DenseCopy() const {
  if (!registers_.empty()) return registers_;
  std::vector<uint8_t> regs(size_t{1} << p_, 0);
  for (uint32_t e : sparse_) regs[e >> 8] = static_cast<uint8_t>(e & 0xff);
  return regs;
}

Status HyperLogLogState::Merge(const MeasureState& other) {
  const auto* o = dynamic_cast<const HyperLogLogState*>(&other);
  if (o == nullptr || o->p_ != p_)
    return Status::Internal("hyperloglog: merge with a state of another measure");
  for (uint32_t e : o->sparse_) Raise(e >> 8, static_cast<uint8_t>(e & 0xff));
  if (!o->registers_.empty()) {
    if (registers_.empty()) Densify();
    // Plain local pointers so the compiler vectorises the register max
    // (through the vectors it reloads both pointers every iteration).
    uint8_t* __restrict dst = registers_.data();
    const uint8_t* __restrict src = o->registers_.data();
    const size_t m = registers_.size();
    for (size_t i = 0; i < m; ++i) dst[i] = dst[i] > src[i] ? dst[i] : src[i];
  }
  skipped_ += o->skipped_;
  return Status::Ok();
}

double HyperLogLogState::Estimate() const {
  if (registers_.empty() && sparse_.empty()) return 0;
  const size_t m = size_t{1} << p_;
  const double md = static_cast<double>(m);
  const int q = 64 - p_;  // registers hold 0..q+1
  uint32_t histogram[66] = {};
  for (uint8_t reg : registers_) ++histogram[reg];
  if (registers_.empty()) {
    histogram[0] = static_cast<uint32_t>(m - sparse_.size());
    for (uint32_t e : sparse_) ++histogram[e & 0xff];
  }
  if (histogram[0] > 0) {
    const double linear = md * std::log(md / static_cast<double>(histogram[0]));
    if (linear <= kLinearCountingThreshold[p_ - 4]) return linear;
  }
  // Ertl's estimator, z = m tau(1 - C_{q+1}/m) 2^-q + sum_k C_k 2^-k
  // + m sigma(C_0/m), evaluated from the top down (Horner-like halving).
  double z = md * Tau(1 - histogram[q + 1] / md);
  for (int k = q; k >= 1; --k) z = 0.5 * (z + histogram[k]);
  z += md * Sigma(histogram[0] / md);
  return kAlphaInfinity * md * md / z;
}

void HyperLogLogState::Encode(ByteWriter& w) const {
  w.Varint(skipped_);
  const size_t m = size_t{1} << p_;
  if (registers_.empty() && 4 * sparse_.size() < m) {  // the common small case: no 2^p array at all
    w.U8(1);  // sparse_ is in index order already
    w.Varint(sparse_.size());
    size_t next = 0;
    for (uint32_t e : sparse_) {
      w.Varint((e >> 8) - next);
      w.U8(static_cast<uint8_t>(e & 0xff));
      next = (e >> 8) + 1;
    }
    return;
  }
  const std::vector<uint8_t> dense_copy = registers_.empty() ? DenseCopy() : std::vector<uint8_t>();
  const std::vector<uint8_t>& regs = registers_.empty() ? dense_copy : registers_;
  size_t k = 0;
  const uint8_t* __restrict r = regs.data();
  for (size_t i = 0; i < m; ++i) k += r[i] != 0;
  if (4 * k < m) {
    w.U8(1);
    w.Varint(k);
    size_t next = 0;
    for (size_t i = 0; i < m; ++i) {
      if (regs[i] == 0) continue;
      w.Varint(i - next);
      w.U8(regs[i]);
      next = i + 1;
    }
  } else {
    w.U8(0);
    w.Bytes(std::string_view(reinterpret_cast<const char*>(regs.data()), m));
  }
}

namespace {

// Reads the registers part of an encoded state (after `skipped`): calls
// visit(index, register) for every non-zero register, in index order.
// Returns false on corrupt bytes, possibly after some visits — callers that
// must not change anything on failure run it once with a no-op first.
template <class Visit>
bool ReadRegisters(ByteReader& r, int p, Visit visit) {
  const size_t m = size_t{1} << p;
  // A rank is at most 64 - p + 1 (the guard bit in InsertHash).
  const uint8_t max_rank = static_cast<uint8_t>(64 - p + 1);
  const uint8_t form = r.U8();
  if (!r.ok()) return false;
  if (form == 1) {
    const size_t k = r.Count(2);
    if (!r.ok() || 4 * k >= m) return false;
    uint64_t next = 0;
    for (size_t j = 0; j < k; ++j) {
      const uint64_t gap = r.Varint();
      const uint8_t reg = r.U8();
      if (!r.ok() || gap >= m - next || reg == 0 || reg > max_rank) return false;
      visit(next + gap, reg);
      next += gap + 1;
    }
    return true;
  }
  if (form != 0) return false;
  const std::string_view bytes = r.Take(m);
  if (!r.ok()) return false;
  size_t k = 0;
  for (size_t i = 0; i < m; ++i) {
    const uint8_t reg = static_cast<uint8_t>(bytes[i]);
    if (reg > max_rank) return false;
    if (reg != 0) {
      ++k;
      visit(i, reg);
    }
  }
  return 4 * k >= m;  // else it would have been written sparse
}

}  // namespace

Status HyperLogLogState::Decode(ByteReader& r) {
  const uint64_t skipped = r.Varint();
  ByteReader check = r;
  if (!r.ok() || !ReadRegisters(check, p_, [](size_t, uint8_t) {}))
    return Status::Corrupt("hyperloglog: bad or truncated state");
  skipped_ = skipped;
  sparse_.clear();
  registers_.clear();
  (void)ReadRegisters(r, p_, [this](size_t i, uint8_t reg) { Raise(static_cast<uint32_t>(i), reg); });
  return Status::Ok();
}

Status HyperLogLogState::MergeEncoded(ByteReader& r, bool apply, MeasureState* /*scratch*/) {
  const uint64_t skipped = r.Varint();
  if (!r.ok()) return Status::Corrupt("hyperloglog: bad or truncated state");
  // The common case in a merge of many small groups: a short sparse list,
  // read (and checked) once into a local array, then applied.
  {
    ByteReader peek = r;
    uint32_t entries[kFastSparse];
    const int k = ReadShortSparse(peek, entries);
    if (k == -2) return Status::Corrupt("hyperloglog: bad or truncated state");
    if (k >= 0) {
      r = peek;
      if (apply) {
        RaiseSorted(entries, static_cast<size_t>(k));
        skipped_ += skipped;
      }
      return Status::Ok();
    }
  }
  ByteReader check = r;
  if (!ReadRegisters(check, p_, [](size_t, uint8_t) {}))
    return Status::Corrupt("hyperloglog: bad or truncated state");
  if (!apply) {
    r = check;
    return Status::Ok();
  }
  // Register-wise max, straight from the bytes: a sparse state touches only
  // its k registers instead of materialising all 2^p.
  (void)ReadRegisters(r, p_, [this](size_t i, uint8_t reg) { Raise(static_cast<uint32_t>(i), reg); });
  skipped_ += skipped;
  return Status::Ok();
}

int HyperLogLogState::ReadShortSparse(ByteReader& r, uint32_t* out) const {
  const size_t m = size_t{1} << p_;
  const uint8_t max_rank = static_cast<uint8_t>(64 - p_ + 1);
  ByteReader in = r;
  const uint8_t form = in.U8();
  if (!in.ok()) return -2;
  if (form != 1) return -1;  // dense: the general path
  const size_t k = in.Count(2);
  if (!in.ok() || 4 * k >= m) return -2;
  if (k > kFastSparse) return -1;
  uint64_t next = 0;
  for (size_t j = 0; j < k; ++j) {
    const uint64_t gap = in.Varint();
    const uint8_t reg = in.U8();
    if (!in.ok() || gap >= m - next || reg == 0 || reg > max_rank) return -2;
    out[j] = static_cast<uint32_t>(next + gap) << 8 | reg;
    next += gap + 1;
  }
  r = in;
  return static_cast<int>(k);
}

void HyperLogLogState::RaiseSorted(const uint32_t* entries, size_t k) {
  if (!registers_.empty()) {
    uint8_t* regs = registers_.data();
    for (size_t j = 0; j < k; ++j) {
      const uint8_t rank = static_cast<uint8_t>(entries[j] & 0xff);
      uint8_t& reg = regs[entries[j] >> 8];
      if (rank > reg) reg = rank;
    }
    return;
  }
  // Most often every register is in the list already: raised in place.
  // (Those raised before one is found missing are raised again below:
  // a max, so no harm.)
  {
    // An entry of `index` is the first not below index << 8 (its rank is at
    // least 1): a binary search over what is left of a list of up to 64,
    // not a scan of it, for each of the few registers a partial brings;
    // without branches on the data (conditional moves), which a CPU could
    // not predict.
    const uint32_t* const list = sparse_.data();
    const size_t size = sparse_.size();
    size_t a = 0, j = 0;
    for (; j < k; ++j) {
      const uint32_t index = entries[j] >> 8;
      const uint32_t want = index << 8;
      if (a == size) break;
      const uint32_t* base = list + a;  // the answer is in [base, base + n]
      for (size_t n = size - a; n > 1;) {
        const size_t half = n / 2;
        base = base[half] < want ? base + half : base;
        n -= half;
      }
      a = static_cast<size_t>(base - list) + (*base < want ? 1 : 0);
      if (a == size || (list[a] >> 8) != index) break;
      sparse_[a] = std::max(sparse_[a], entries[j]);  // same index: the larger rank
    }
    if (j == k) return;
  }
  // Both lists ascend by index: the union's size first, then one merge
  // pass from the back, in place. The same registers as k Raise calls; the
  // list becomes the array exactly when it would pass SparseLimit(), as
  // Raise decides.
  size_t n = 0;
  for (size_t a = 0, b = 0; a < sparse_.size() || b < k; ++n) {
    if (b == k || (a < sparse_.size() && (sparse_[a] >> 8) < (entries[b] >> 8))) {
      ++a;
    } else if (a == sparse_.size() || (entries[b] >> 8) < (sparse_[a] >> 8)) {
      ++b;
    } else {
      ++a;
      ++b;
    }
  }
  if (n > SparseLimit()) {
    Densify();
    for (size_t j = 0; j < k; ++j) {
      uint8_t& reg = registers_[entries[j] >> 8];
      reg = std::max(reg, static_cast<uint8_t>(entries[j] & 0xff));
    }
    return;
  }
  size_t a = sparse_.size(), b = k, out = n;
  sparse_.resize(n);
  while (b > 0) {  // what is left of sparse_ below `a` is already in place
    if (a > 0 && (sparse_[a - 1] >> 8) > (entries[b - 1] >> 8)) {
      sparse_[--out] = sparse_[--a];
    } else if (a > 0 && (sparse_[a - 1] >> 8) == (entries[b - 1] >> 8)) {
      sparse_[--out] = std::max(sparse_[--a], entries[--b]);  // same index: the larger rank
    } else {
      sparse_[--out] = entries[--b];
    }
  }
}

void HyperLogLogState::PrefetchMerge(std::string_view encoded) const {
  ByteReader r(encoded);
  (void)r.Varint();  // skipped
  const uint8_t form = r.U8();
  if (!r.ok()) return;
  if (registers_.empty()) {
    // The whole list (up to 64 entries of 4 bytes: four lines).
    const char* list = reinterpret_cast<const char*>(sparse_.data());
    const size_t bytes = sparse_.size() * sizeof(sparse_[0]);
    for (size_t i = 0; i < bytes; i += 64) __builtin_prefetch(list + i);
    if (bytes > 0) __builtin_prefetch(list + bytes - 1);  // the list need not start a line
    return;
  }
  const size_t m = registers_.size();
  const char* regs = reinterpret_cast<const char*>(registers_.data());
  if (form != 1) {
    for (size_t i = 0; i < m; i += 64) __builtin_prefetch(regs + i);
    return;
  }
  // Only the framing is read; the indices are reduced mod m, so the
  // address stays inside the registers whatever the bytes say.
  const uint64_t k = r.Varint();
  uint64_t next = 0;
  for (uint64_t j = 0; j < k && j < 64; ++j) {
    next += r.Varint();
    (void)r.U8();
    if (!r.ok()) return;
    __builtin_prefetch(regs + (next & (m - 1)));
    ++next;
  }
}

void HyperLogLogState::Finalize(std::vector<Cell>* out) const {
  out->push_back(Cell::Int(std::llround(Estimate())));
}

}  // namespace fanfold
