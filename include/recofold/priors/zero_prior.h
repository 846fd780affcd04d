// SPDX-License-Identifier: Apache-2.0
// The zero prior ("none"): R(x) = 0.
#pragma once

#include "recofold/priors/prior.h"

namespace recofold {

// R(x) = 0: value 0, prox = identity, gradient 0; with a box the prox is the
// projection (exact). Used for plain least squares and prior kind "none".
class ZeroPrior final : public Prior {
 public:
  ZeroPrior() : Prior(0.0) {}
  double value(const VecC& x) const override;
  void prox(const VecC& v, double step, VecC& out) const override;
  bool has_gradient() const override { return true; }
  void gradient(const VecC& x, VecC& g) const override;
  bool prox_with_box(const VecC& v, double step, const Box& box, VecC& out) const override;
  std::unique_ptr<Prior> clone() const override { return std::make_unique<ZeroPrior>(*this); }
  std::string name() const override { return "none"; }
};

}  // namespace recofold
