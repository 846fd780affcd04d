// SPDX-License-Identifier: Apache-2.0
// xoshiro256** generator and portable distributions.
#include "recofold/core/rng.h"

#include <cmath>

namespace recofold {

namespace {
uint64_t splitmix64(uint64_t& x) {
  uint64_t z = (x += 0x9e3779b97f4a7c15ULL);
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}
inline uint64_t rotl(uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }
constexpr double kPi = 3.14159265358979323846;
}  // namespace

Rng::Rng(uint64_t seed) {
  uint64_t x = seed;
  for (auto& s : s_) s = splitmix64(x);
}

Rng Rng::for_stream(uint64_t seed, uint64_t stream) {
  uint64_t x = seed ^ (0xd1b54a32d192ed03ULL * (stream + 1));
  return Rng(splitmix64(x));
}

uint64_t Rng::next_u64() {
  const uint64_t result = rotl(s_[1] * 5, 7) * 9;
  const uint64_t t = s_[1] << 17;
  s_[2] ^= s_[0];
  s_[3] ^= s_[1];
  s_[1] ^= s_[2];
  s_[0] ^= s_[3];
  s_[2] ^= t;
  s_[3] = rotl(s_[3], 45);
  return result;
}

double Rng::uniform() { return static_cast<double>(next_u64() >> 11) * 0x1.0p-53; }

double Rng::uniform(double lo, double hi) { return lo + (hi - lo) * uniform(); }

uint64_t Rng::below(uint64_t n) {
  // Lemire's rejection on the top bits would need 128-bit products; a simple
  // threshold rejection is portable and unbiased.
  const uint64_t limit = (~uint64_t{0}) - ((~uint64_t{0}) % n);
  uint64_t r;
  do {
    r = next_u64();
  } while (r >= limit);
  return r % n;
}

double Rng::normal() {
  if (have_spare_) {
    have_spare_ = false;
    return spare_;
  }
  double u1;
  do {
    u1 = uniform();
  } while (u1 <= 0.0);
  const double u2 = uniform();
  const double r = std::sqrt(-2.0 * std::log(u1));
  spare_ = r * std::sin(2.0 * kPi * u2);
  have_spare_ = true;
  return r * std::cos(2.0 * kPi * u2);
}

int64_t Rng::poisson(double lambda) {
  if (!(lambda > 0.0)) return 0;
  if (lambda < 30.0) {
    const double limit = std::exp(-lambda);
    int64_t k = 0;
    double p = uniform();
    while (p > limit) {
      ++k;
      p *= uniform();
    }
    return k;
  }
  // PTRS: W. Hörmann, "The transformed rejection method for generating Poisson
  // random variables", Insurance: Mathematics and Economics 12 (1993).
  const double slam = std::sqrt(lambda);
  const double loglam = std::log(lambda);
  const double b = 0.931 + 2.53 * slam;
  const double a = -0.059 + 0.02483 * b;
  const double invalpha = 1.1239 + 1.1328 / (b - 3.4);
  const double vr = 0.9277 - 3.6224 / (b - 2.0);
  while (true) {
    const double u = uniform() - 0.5;
    const double v = uniform();
    const double us = 0.5 - std::fabs(u);
    const double k = std::floor((2.0 * a / us + b) * u + lambda + 0.43);
    if (us >= 0.07 && v <= vr) return static_cast<int64_t>(k);
    if (k < 0.0 || (us < 0.013 && v > us)) continue;
    if (std::log(v) + std::log(invalpha) - std::log(a / (us * us) + b) <=
        -lambda + k * loglam - std::lgamma(k + 1.0))
      return static_cast<int64_t>(k);
  }
}

}  // namespace recofold
