// SPDX-License-Identifier: Apache-2.0
// ISTA: proximal gradient descent for 1/2||Ax - y||^2 + lambda R(x).
#pragma once

#include <string>
#include <vector>

#include "recofold/core/progress.h"
#include "recofold/ops/linear_operator.h"
#include "recofold/priors/prior.h"
#include "recofold/recon/solver_summary.h"

namespace recofold {

// ISTA (iterative shrinkage-thresholding; Beck & Teboulle, SIAM J. Imaging Sci. 2009):
//   x_{k+1} = prox_{s lambda R}(x_k - s A^H (A x_k - y)),  s = 1/L, L = ||A||^2.
// The objective F(x) = 1/2||Ax - y||^2 + lambda R(x) does not increase when s <= 1/L.
struct IstaOptions {
  int max_iterations = 100;          // hard cap, >= 1
  double step_size = 0.0;            // s; <= 0 means 1/(1.05 L) with L from power iteration (5 % margin)
  int power_iterations = 50;         // power-iteration steps for L (when step_size <= 0), >= 1
  uint64_t power_seed = 1;           // seed of the power iteration's start vector
  double relative_tolerance = 1e-6;  // stop when ||x_k - x_{k-1}|| / ||x_k|| <= this; 0 = never, >= 0
  bool record_objective = true;      // objective per iteration (prior value per iteration; A x is reused)

  std::vector<std::string> validate() const;  // "ista.max_iterations = 0; must be >= 1", ...
};

// `x`: start image on input (zeros when empty), result on output. Throws
// InputError for invalid options or sizes. Summary values: "step_size",
// "lipschitz" (the estimate, when estimated).
SolverSummary solve_ista(const IstaOptions& options, const LinearOperator& a, const Prior& prior, const VecC& y,
                         VecC& x, ProgressSink* progress = nullptr);

}  // namespace recofold
