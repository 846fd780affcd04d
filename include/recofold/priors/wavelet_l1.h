// SPDX-License-Identifier: Apache-2.0
// l1 norm of orthogonal wavelet coefficients (sparsity prior), optional per-band weights and cycle spinning.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "recofold/ops/wavelet.h"
#include "recofold/priors/prior.h"

namespace recofold {

struct WaveletL1Options {
  WaveletFamily family = WaveletFamily::kDb4;  // db1 (Haar) .. db4; db4 is a good default for smooth phantoms
  int levels = 4;  // decomposition levels, >= 1; image sides must be divisible by 2^levels
  // Penalise the coarsest approximation band too. Default false: the
  // approximation carries the mean intensity and is not sparse, so leaving it
  // free avoids a bias of the image level (common practice).
  bool penalise_approximation = false;
  // Per-band weights w_b, indexed like WaveletTransform::sub_bands() (entry 0 =
  // approximation). Empty = all 1. Size must equal 1 + 3 * levels. The hook for
  // learned per-band thresholds.
  std::vector<double> band_weights;
  // Random cycle spinning: prox_at(v, step, call) draws a circular shift
  // (dy, dx), uniform in [0, 2^levels)^2, from the stream seeded by
  // (cycle_spin_seed, call) -- the solver's iteration -- and thresholds the
  // transform of the shifted image. Reduces blocking of thresholded wavelets
  // inside iterative solvers. prox(v, step) (no call index) is never shifted.
  bool cycle_spin = false;
  uint64_t cycle_spin_seed = 1;

  // Every violation; empty means valid. `image_shape` checks divisibility.
  std::vector<std::string> validate(const Shape& image_shape) const;
};

// R(x) = sum_i w_{b(i)} |(W x)_i| over the penalised coefficients, W the
// orthogonal periodised transform of ops/wavelet.h (|.| is the complex modulus).
//   prox(v, s) = W^H S_{s lambda w}(W v), S the complex soft threshold: exact,
//   because W is orthogonal. With cycle spinning the prox is the exact prox of
//   R(shift(x)) for the drawn shift, while value() reports the unshifted R, so
//   objectives of solvers using it are those of the unshifted problem.
//   analysis form: K = W, g = the weighted l1 norm; (lambda g)^* is the
//   indicator of |q_i| <= lambda w_b(i) (q_i = 0 on unpenalised bands).
//   With a box: no exact method (ConstrainedPrior uses proximal Dykstra).
// Thread safety: no state between calls (the shift is a function of the call
// index), so concurrent use is safe and reproducible.
class WaveletL1Prior final : public Prior {
 public:
  // Throws InputError (field "wavelet.*") when options.validate(image_shape) fails.
  WaveletL1Prior(Shape image_shape, double weight, WaveletL1Options options = {});
  WaveletL1Prior(const WaveletL1Prior& other);

  double value(const VecC& x) const override;
  void prox(const VecC& v, double step, VecC& out) const override;
  void prox_at(const VecC& v, double step, uint64_t call, VecC& out) const override;
  bool varies_per_call() const override { return options_.cycle_spin; }
  // The circular shift (dy, dx) of call `call` (0, 0 without cycle spinning or for call 0).
  std::pair<Index, Index> cycle_shift(uint64_t call) const;
  std::shared_ptr<const LinearOperator> analysis_operator() const override { return transform_; }
  double analysis_value(const VecC& z) const override;
  void analysis_prox(const VecC& w, double step, VecC& out) const override;
  double analysis_conjugate(const VecC& q) const override;
  std::unique_ptr<Prior> clone() const override { return std::make_unique<WaveletL1Prior>(*this); }
  std::string name() const override;

  const WaveletL1Options& options() const { return options_; }
  const WaveletTransform& transform() const { return *transform_; }
  // Threshold multiplier per packed coefficient: w_b(i), or 0 on unpenalised bands.
  const std::vector<float>& coefficient_weights() const { return coefficient_weights_; }

 private:
  Shape shape_;
  WaveletL1Options options_;
  std::shared_ptr<const WaveletTransform> transform_;
  std::vector<float> coefficient_weights_;
};

}  // namespace recofold
