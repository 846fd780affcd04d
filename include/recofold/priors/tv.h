// SPDX-License-Identifier: Apache-2.0
// Total variation prior (isotropic or anisotropic, real or complex images), prox by fast dual gradient projection.
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "recofold/core/scratch.h"
#include "recofold/ops/finite_diff.h"
#include "recofold/priors/prior.h"

namespace recofold {

struct TvOptions {
  // Isotropic TV (default; rotation-friendlier edges) or anisotropic (l1 of
  // each difference; favours axis-aligned edges).
  bool isotropic = true;
  DiffBoundary boundary = DiffBoundary::kNeumann;  // see ops/finite_diff.h
  // Inner FGP iterations per prox call (Beck & Teboulle, IEEE TIP 2009). 50-200
  // is typical; raise it for large lambda*step or when the prox must be accurate.
  int max_iterations = 100;
  // Stop the inner iteration when ||x_k - x_{k-1}|| <= tolerance * ||x_k||; 0 = always max_iterations.
  double tolerance = 1e-5;

  std::vector<std::string> validate() const;  // fields "tv.max_iterations", "tv.tolerance"
};

// Total variation with D the forward differences of ops/finite_diff.h
// (components D0 along y and D1 along x, |.| the complex modulus):
//   isotropic     R(x) = sum_p sqrt(|(D0 x)_p|^2 + |(D1 x)_p|^2)
//   anisotropic   R(x) = sum_p |(D0 x)_p| + |(D1 x)_p|
// For real images this is the usual TV; for complex images the isotropic form
// couples real and imaginary parts per pixel (a real input gives a real prox).
// prox(v, s): minimise 1/2||u - v||^2 + theta R(u), theta = s lambda, by FGP on
//   the dual: u(p) = P_C(v - theta D^H p), p <- Proj_{|p|<=1}(r + D u(r) / (8 theta)),
//   FISTA momentum on p. C is the whole space for prox() and the box for
//   prox_with_box(), which is therefore exact up to the inner iteration
//   count/tolerance (the constrained FGP of Beck & Teboulle 2009).
// analysis form: K = D, g = the TV norm of D x; (lambda g)^* is the indicator of
//   the dual ball |q_p| <= lambda (pairwise for isotropic, per entry for
//   anisotropic), evaluated with a relative tolerance of 1e-4.
// Implementation: single precision with channel-planar buffers (one channel
// for real inputs, two for complex), fused row loops (divergence + primal
// step + box, and difference + dual projection + momentum) that vectorise,
// OpenMP over rows from 256^2 up; the stopping test sums per-row norms in row
// order, so results do not depend on the thread count. The buffers are kept
// between calls (no allocation per call once sized).
// Thread-safe: concurrent calls on one object each get their own buffers.
class TvPrior final : public Prior {
 public:
  // Throws InputError when options.validate() fails or the shape is not 2-D.
  TvPrior(Shape image_shape, double weight, TvOptions options = {});
  TvPrior(const TvPrior& other);  // copies settings, not buffers
  ~TvPrior() override;

  double value(const VecC& x) const override;
  void prox(const VecC& v, double step, VecC& out) const override;
  bool prox_with_box(const VecC& v, double step, const Box& box, VecC& out) const override;
  std::shared_ptr<const LinearOperator> analysis_operator() const override { return diff_; }
  double analysis_value(const VecC& z) const override;
  void analysis_prox(const VecC& w, double step, VecC& out) const override;
  double analysis_conjugate(const VecC& q) const override;
  std::unique_ptr<Prior> clone() const override { return std::make_unique<TvPrior>(*this); }
  std::string name() const override;

  const TvOptions& options() const { return options_; }
  // Unweighted R(x).
  double total_variation(const VecC& x) const;

 private:
  void fgp(const VecC& v, double theta, const Box* box, VecC& out) const;
  struct Workspace;

  Shape shape_;
  TvOptions options_;
  std::shared_ptr<const FiniteDifference> diff_;
  ScratchCache<Workspace> scratch_;
};

}  // namespace recofold
