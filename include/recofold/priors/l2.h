// SPDX-License-Identifier: Apache-2.0
// Tikhonov (l2) prior with an optional reference image.
#pragma once

#include "recofold/priors/prior.h"

namespace recofold {

// R(x) = 1/2 ||x - r||^2 with reference r (0 when none is given).
//   prox(v, s)   = (v + s lambda r) / (1 + s lambda)             (exact)
//   gradient(x)  = lambda (x - r)
//   with a box: the prox followed by the box projection (exact, because
//   R is separable per pixel and the 1-D problems are convex).
//   analysis form: K = I, g = R; conjugate (lambda g)^*(q) = ||q||^2/(2 lambda) + Re<q, r>.
class L2Prior final : public Prior {
 public:
  // image_shape: the reconstruction's domain shape; `reference` empty or of that size.
  L2Prior(Shape image_shape, double weight, VecC reference = VecC());

  double value(const VecC& x) const override;
  void prox(const VecC& v, double step, VecC& out) const override;
  bool has_gradient() const override { return true; }
  void gradient(const VecC& x, VecC& g) const override;
  bool prox_with_box(const VecC& v, double step, const Box& box, VecC& out) const override;
  std::shared_ptr<const LinearOperator> analysis_operator() const override { return identity_; }
  double analysis_value(const VecC& z) const override;
  void analysis_prox(const VecC& w, double step, VecC& out) const override;
  double analysis_conjugate(const VecC& q) const override;
  std::unique_ptr<Prior> clone() const override { return std::make_unique<L2Prior>(*this); }
  std::string name() const override;

  const VecC& reference() const { return reference_; }

 private:
  Shape shape_;
  VecC reference_;  // empty = 0
  std::shared_ptr<const LinearOperator> identity_;
};

}  // namespace recofold
