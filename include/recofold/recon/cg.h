// SPDX-License-Identifier: Apache-2.0
// Conjugate gradients: a generic Hermitian solver and least squares / Tikhonov / CG-SENSE on any operator.
#pragma once

#include <functional>
#include <string>
#include <vector>

#include "recofold/core/progress.h"
#include "recofold/ops/linear_operator.h"
#include "recofold/recon/solver_summary.h"

namespace recofold {

// Outcome of conjugate_gradient().
struct CgResult {
  int iterations = 0;
  double relative_residual = 0.0;  // ||b - H x|| / ||b|| at exit (0 when b = 0)
  bool converged = false;
};

// Work vectors of conjugate_gradient() and solve_regularised_normal(). A
// caller that solves repeatedly (ADMM, the unrolled CG step) keeps one and
// passes it each time, so only the first solve allocates.
struct CgWorkspace {
  VecC r, p, hp, b;
};

// Solves H x = b for a Hermitian positive (semi-)definite H given by
// `apply_h(in, out)` (out = H in), starting from `x` (warm start; zeros if x is
// empty). Stops after `max_iterations` or when ||b - H x|| <= tolerance ||b||.
// Inner products accumulate in double. `after_iteration(k, x, rel_residual)`,
// if given, runs after each iteration k (1-based) and may return false to stop.
// `workspace`: reused work vectors (null: local ones). `b` must not be one of them
// except workspace->b. (Hestenes & Stiefel 1952.)
CgResult conjugate_gradient(const std::function<void(const VecC&, VecC&)>& apply_h, const VecC& b, VecC& x,
                            int max_iterations, double tolerance,
                            const std::function<bool(int, const VecC&, double)>& after_iteration = nullptr,
                            CgWorkspace* workspace = nullptr);

// Least squares with optional Tikhonov term:
//   minimise 1/2 ||A x - y||^2 + mu/2 ||x - r||^2    (r = reference or 0)
// by CG on the normal equations (A^H A + mu I) x = A^H y + mu r. With A a
// multi-coil SENSE operator this is CG-SENSE (Pruessmann et al., MRM 2001).
struct CgOptions {
  int max_iterations = 30;    // CG steps; 10-50 is typical for undersampled MRI (early stopping regularises)
  double tolerance = 1e-6;    // stop when the normal-equation residual <= tolerance * ||A^H y + mu r||; >= 0
  double tikhonov = 0.0;      // mu >= 0; 0 = plain least squares
  // Record objective and data residual per iteration (costs one extra A apply per iteration).
  bool record_objective = true;

  // Every violation ("cg.max_iterations = 0; must be >= 1"); empty means valid.
  std::vector<std::string> validate() const;
};

// `x`: start image on input (zeros when empty), result on output. `reference`:
// optional r of the domain size. Throws InputError when options are invalid.
// Summary values: "tikhonov", "relative_residual".
SolverSummary solve_cg(const CgOptions& options, const LinearOperator& a, const VecC& y, VecC& x,
                       ProgressSink* progress = nullptr, const VecC* reference = nullptr);

// The regularised normal-equation solve shared by ADMM and the unrolled
// scheme's CG data-consistency step:
//   x = argmin 1/2||A x - y||^2 + mu/2 ||x - z||^2,  i.e. (A^H A + mu I) x = A^H y + mu z,
// `aty` = A^H y precomputed; x is the warm start and the result (x may be z).
// `workspace`: as for conjugate_gradient().
CgResult solve_regularised_normal(const LinearOperator& a, const VecC& aty, const VecC& z, double mu, VecC& x,
                                  int max_iterations, double tolerance, CgWorkspace* workspace = nullptr);

}  // namespace recofold
