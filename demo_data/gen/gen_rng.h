// GenRng: the demo generator's pseudo-random source — xoshiro256** seeded
// through splitmix64 (Blackman & Vigna). Implemented here, with no std::
// distributions, so that a seed gives the same bytes on every platform and
// standard-library version. Values; one instance per thread.
#pragma once

#include <cstdint>

namespace fanfold::gen {

// One splitmix64 step: advances *state and returns the next output. Also used
// as a stateless mixer for per-lamp and per-shard properties.
inline uint64_t SplitMix64(uint64_t* state) {
  uint64_t z = (*state += 0x9E3779B97F4A7C15ull);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
  return z ^ (z >> 31);
}

// A hash of (a, b) used to derive independent streams and fixed properties.
inline uint64_t Mix(uint64_t a, uint64_t b) {
  uint64_t s = a ^ (b * 0xD1B54A32D192ED03ull);
  SplitMix64(&s);
  return SplitMix64(&s);
}

class GenRng {
 public:
  explicit GenRng(uint64_t seed) {
    uint64_t s = seed;
    for (uint64_t& w : s_) w = SplitMix64(&s);
  }

  uint64_t Next() {
    const uint64_t result = Rotl(s_[1] * 5, 7) * 9;
    const uint64_t t = s_[1] << 17;
    s_[2] ^= s_[0];
    s_[3] ^= s_[1];
    s_[1] ^= s_[2];
    s_[0] ^= s_[3];
    s_[2] ^= t;
    s_[3] = Rotl(s_[3], 45);
    return result;
  }

  // Uniform in [0, 1) with 53 random bits.
  double Uniform() { return static_cast<double>(Next() >> 11) * 0x1.0p-53; }

  // Uniform integer in [0, n). REQUIRES: n > 0. The tiny modulo bias is
  // irrelevant for demo data and keeps the stream simple to reason about.
  uint64_t Below(uint64_t n) { return Next() % n; }

  // True with probability p.
  bool Chance(double p) { return Uniform() < p; }

 private:
  static uint64_t Rotl(uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }
  uint64_t s_[4];
};

}  // namespace fanfold::gen
