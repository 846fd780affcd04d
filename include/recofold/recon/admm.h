// SPDX-License-Identifier: Apache-2.0
// ADMM with CG inner solves for analysis priors (TV, wavelet, l2) on any operator, with an optional box.
#pragma once

#include <string>
#include <vector>

#include "recofold/core/progress.h"
#include "recofold/ops/linear_operator.h"
#include "recofold/priors/prior.h"
#include "recofold/recon/solver_summary.h"

namespace recofold {

// ADMM (Boyd et al., Found. Trends ML 2011, scaled form) for
//   minimise 1/2||A x - y||^2 + lambda g(K x) [+ i_C(x)]
// with K = prior.analysis_operator() (finite differences for TV, the wavelet
// transform for l1-wavelet, identity for l2) and, for a ConstrainedPrior, the
// box C as a second split w = x:
//   x  <- argmin 1/2||Ax - y||^2 + rho/2 ||K x - z + u||^2 [+ rho/2 ||x - w + u2||^2]   (CG, warm start)
//   z  <- prox_{(lambda/rho) g}(K x + u)          w <- P_C(x + u2)
//   u  <- u + K x - z                             u2 <- u2 + x - w
// With residual balancing (Boyd et al. section 3.4.1) rho is multiplied or
// divided by 2 when the primal and dual residuals differ by more than 10x.
// The returned image is x (projected onto C when there is a box). The recorded
// objective is 1/2||Ax - y||^2 + lambda R(x) of the unconstrained prior.
struct AdmmOptions {
  int max_iterations = 100;          // outer iterations, >= 1
  double rho = 0.0;                  // penalty > 0; <= 0 means 10 * lambda (or 1e-2 when lambda = 0)
  bool adaptive_rho = true;          // residual balancing
  int cg_iterations = 10;            // inner CG steps per x-update, >= 1
  double cg_tolerance = 1e-5;        // inner CG relative residual, >= 0
  double relative_tolerance = 1e-5;  // stop when ||x_k - x_{k-1}|| / ||x_k|| <= this, >= 0
  bool record_objective = true;      // objective per iteration (one extra A apply)

  std::vector<std::string> validate() const;  // "admm.cg_iterations = 0; must be >= 1", ...
};

// `prior` must have an analysis form, directly or inside a ConstrainedPrior;
// otherwise InputError (field "admm.prior"). `x`: start on input (zeros when
// empty), result on output. Summary values: "rho" (final), "rho_initial".
SolverSummary solve_admm(const AdmmOptions& options, const LinearOperator& a, const Prior& prior, const VecC& y,
                         VecC& x, ProgressSink* progress = nullptr);

}  // namespace recofold
