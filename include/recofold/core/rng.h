// SPDX-License-Identifier: Apache-2.0
// Seeded random numbers that give the same bytes on every machine and compiler.
#pragma once

#include <cstdint>

namespace recofold {

// xoshiro256** (Blackman & Vigna, 2018) seeded through splitmix64. The standard
// library's distributions are implementation-defined, so every distribution
// here is written out: same seed, same numbers, on any platform.
class Rng {
 public:
  explicit Rng(uint64_t seed = 0);

  // Independent stream for a sub-task (e.g. object i of a family): a new
  // generator seeded from (seed, stream) only, not from this generator's state.
  static Rng for_stream(uint64_t seed, uint64_t stream);

  uint64_t next_u64();
  // Uniform on [0, 1) with 53 random bits.
  double uniform();
  // Uniform on [lo, hi).
  double uniform(double lo, double hi);
  // Uniform integer on [0, n), n > 0, without modulo bias.
  uint64_t below(uint64_t n);
  // Standard normal (Box–Muller; the second value is kept for the next call).
  double normal();
  // Poisson with mean lambda >= 0: multiplication method below 30, PTRS
  // transformed rejection (Hörmann, 1993) above.
  int64_t poisson(double lambda);

 private:
  uint64_t s_[4];
  bool have_spare_ = false;
  double spare_ = 0.0;
};

}  // namespace recofold
