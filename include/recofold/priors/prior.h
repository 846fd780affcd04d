// SPDX-License-Identifier: Apache-2.0
// The Prior interface: weighted penalty value, proximal map, optional gradient and analysis form.
#pragma once

#include <cstdint>
#include <memory>
#include <string>

#include "recofold/core/types.h"
#include "recofold/ops/linear_operator.h"
#include "recofold/priors/box.h"

namespace recofold {

// A convex penalty lambda * R(x) on images (flat complex vectors, the layout of
// the reconstruction operator's domain). `lambda` is the prior's weight
// (weight() / set_weight()); every value and prox below includes it:
//   value(x)          = lambda * R(x)
//   prox(v, step)     = argmin_u  1/2 ||u - v||^2 + step * lambda * R(u)      (step > 0)
//   gradient(x)       = lambda * grad R(x)            (only when has_gradient())
// Analysis form (used by the splitting solvers ADMM and PDHG): priors that can
// be written R(x) = g(K x) with a linear K and a simple g expose
//   analysis_operator()         K (null when there is no such form)
//   analysis_value(z)           lambda * g(z)
//   analysis_prox(w, step)      argmin_z 1/2 ||z - w||^2 + step * lambda * g(z)
//   analysis_conjugate(q)       (lambda g)^*(q), the convex conjugate (may be +inf)
//
// Thread safety: all methods are const, hold no state between calls, and may
// run concurrently on different vectors.
// Output vectors may be the same object as the input.
class Prior {
 public:
  explicit Prior(double weight = 1.0) : weight_(weight) {}
  virtual ~Prior() = default;

  virtual double value(const VecC& x) const = 0;
  virtual void prox(const VecC& v, double step, VecC& out) const = 0;
  // The prox of the `call`-th prior step of a solver run (call = 1, 2, ...:
  // the solver's iteration). Priors whose step is randomised per call
  // (wavelet cycle spinning) draw from a stream seeded by (their seed, call),
  // so the result depends only on the arguments, never on call history;
  // every other prior ignores `call` and returns prox(v, step).
  virtual void prox_at(const VecC& v, double step, uint64_t call, VecC& out) const { (void)call; prox(v, step, out); }
  // True when prox_at depends on `call` (then prox_with_box, which has no call, is not used for it).
  virtual bool varies_per_call() const { return false; }

  virtual bool has_gradient() const { return false; }
  // Aborts (a bug) when !has_gradient().
  virtual void gradient(const VecC& x, VecC& g) const;

  // Exact prox of lambda R + indicator(box): out = argmin 1/2||u-v||^2 + step lambda R(u), u in box.
  // Returns false (and leaves `out` unspecified) when this prior has no exact
  // method; ConstrainedPrior then falls back to a proximal Dykstra iteration.
  virtual bool prox_with_box(const VecC& v, double step, const Box& box, VecC& out) const;

  virtual std::shared_ptr<const LinearOperator> analysis_operator() const { return nullptr; }
  // The analysis methods abort (a bug) when analysis_operator() is null.
  virtual double analysis_value(const VecC& z) const;
  virtual void analysis_prox(const VecC& w, double step, VecC& out) const;
  virtual double analysis_conjugate(const VecC& q) const;

  // Deep copy with the same weight, options and state.
  virtual std::unique_ptr<Prior> clone() const = 0;
  // "tv (isotropic, neumann) lambda 0.01"
  virtual std::string name() const = 0;

  double weight() const { return weight_; }
  // lambda >= 0 (aborts on a negative or non-finite weight: callers validate input first).
  virtual void set_weight(double lambda);

 protected:
  double weight_;
};

}  // namespace recofold
