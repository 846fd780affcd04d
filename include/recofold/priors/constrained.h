// SPDX-License-Identifier: Apache-2.0
// A prior restricted to a box: lambda R(x) + indicator_C(x).
#pragma once

#include <memory>
#include <string>

#include "recofold/priors/prior.h"

namespace recofold {

// P(x) = lambda R(x) + i_C(x), C a Box (e.g. non-negativity for CT).
//   value(x) = inner.value(x), or +inf when x violates C by more than 1e-6
//   times max(1, max |x|).
//   prox: what is exact and what is not —
//     * ZeroPrior, L2Prior: prox then projection, exact (separable per pixel);
//     * TvPrior: constrained FGP, exact up to its inner iterations;
//     * any other prior (WaveletL1Prior, user priors): proximal Dykstra
//       iteration (Combettes & Pesquet 2011, "Dykstra-like" splitting; from
//       memory) y = prox_R(x + p), p += x - y, x = P_C(y + q), q += y - x,
//       run for `dykstra_iterations`; converges to the exact prox, the result
//       is always in C.
//   weight()/set_weight() act on the inner prior.
//   No analysis form of its own: PDHG and ADMM ask for inner() and box() and
//   treat the box as a separate term.
class ConstrainedPrior final : public Prior {
 public:
  ConstrainedPrior(std::unique_ptr<Prior> inner, Box box, int dykstra_iterations = 30);
  ConstrainedPrior(const ConstrainedPrior& other);

  double value(const VecC& x) const override;
  void prox(const VecC& v, double step, VecC& out) const override;
  // The inner prior's prox_at(.., call) inside the same box handling.
  void prox_at(const VecC& v, double step, uint64_t call, VecC& out) const override;
  bool varies_per_call() const override { return inner_->varies_per_call(); }
  std::unique_ptr<Prior> clone() const override { return std::make_unique<ConstrainedPrior>(*this); }
  std::string name() const override;
  void set_weight(double lambda) override;

  const Prior& inner() const { return *inner_; }
  const Box& box() const { return box_; }

 private:
  std::unique_ptr<Prior> inner_;
  Box box_;
  int dykstra_iterations_;
};

}  // namespace recofold
