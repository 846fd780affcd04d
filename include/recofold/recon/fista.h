// SPDX-License-Identifier: Apache-2.0
// FISTA: accelerated proximal gradient with adaptive restart.
#pragma once

#include <string>
#include <vector>

#include "recofold/core/progress.h"
#include "recofold/ops/linear_operator.h"
#include "recofold/priors/prior.h"
#include "recofold/recon/solver_summary.h"

namespace recofold {

// FISTA (Beck & Teboulle, SIAM J. Imaging Sci. 2009) for F(x) = 1/2||Ax - y||^2 + lambda R(x):
//   x_{k+1} = prox_{s lambda R}(v_k - s A^H (A v_k - y)),
//   t_{k+1} = (1 + sqrt(1 + 4 t_k^2))/2,  v_{k+1} = x_{k+1} + (t_k - 1)/t_{k+1} (x_{k+1} - x_k).
// Adaptive restart (O'Donoghue & Candes, FoCM 2015, gradient scheme): when
// Re<v_k - x_{k+1}, x_{k+1} - x_k> > 0 the momentum is reset (t = 1, v = x_{k+1}).
struct FistaOptions {
  int max_iterations = 200;          // hard cap, even without convergence; >= 1
  double step_size = 0.0;            // 1/L; <= 0 means 1/(1.05 L) with L estimated by power iteration
  int power_iterations = 50;         // only used when step_size <= 0; >= 1
  uint64_t power_seed = 1;           // seed of the power iteration's start vector
  double relative_tolerance = 1e-6;  // stop when ||x_k - x_{k-1}|| / ||x_k|| is below this; >= 0; 0 = never
  bool adaptive_restart = true;      // O'Donoghue & Candes (2015)
  // Objective and data residual per iteration: one extra A apply per iteration
  // (the gradient is taken at v_k, not x_k). Switch off for timing runs.
  bool record_objective = true;

  std::vector<std::string> validate() const;  // every violation; empty means valid
};

// `x`: start image on input (zeros when empty), result on output. Throws
// InputError for invalid options or sizes. Summary values: "step_size",
// "lipschitz" (when estimated), "restarts".
SolverSummary solve_fista(const FistaOptions& options, const LinearOperator& a, const Prior& prior, const VecC& y,
                          VecC& x, ProgressSink* progress = nullptr);

}  // namespace recofold
