// SPDX-License-Identifier: Apache-2.0
// Iterative method names and one entry point that runs any of them with a prior (for the CLI and studies).
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/progress.h"
#include "recofold/ops/linear_operator.h"
#include "recofold/priors/prior_spec.h"
#include "recofold/recon/lambda_sweep.h"

namespace recofold {

// The iterative methods of `recofold recon --method` (zero-filled, fbp and
// unrolled are not iterative solvers of a prior and are handled elsewhere).
enum class SolverMethod { kCg, kIsta, kFista, kAdmm, kPdhg };

std::string_view to_string(SolverMethod method);  // "cg", "ista", "fista", "admm", "pdhg"
std::optional<SolverMethod> parse_solver_method(std::string_view text);
std::string accepted_solver_methods();  // "cg, ista, fista, admm, pdhg"

// Which priors a method accepts, as messages naming "--prior" (empty = fine):
// cg takes none or l2 (lambda is the Tikhonov weight); admm needs a prior
// with an analysis form (l2, wavelet, tv, tv-aniso; not none); ista, fista
// and pdhg take every prior.
std::vector<std::string> check_method_prior(SolverMethod method, PriorKind prior);

// A RegularisedSolve (lambda_sweep.h) running `method` on (a, y) for at most
// `iterations` iterations (>= 1) with each solver's default options otherwise
// (FISTA with adaptive restart; ADMM with 10 inner CG steps; PDHG with
// automatic steps). The prior passed to the returned function supplies lambda;
// for cg it must be an L2Prior (Tikhonov weight, reference honoured) or a
// ZeroPrior. `a`, `y` and `progress` must outlive the returned function.
// Usable directly (solve(prior, x)), in sweep_lambda and in
// choose_lambda_discrepancy ("--lambda auto").
RegularisedSolve make_regularised_solve(SolverMethod method, const LinearOperator& a, const VecC& y, int iterations,
                                        ProgressSink* progress = nullptr);

}  // namespace recofold
