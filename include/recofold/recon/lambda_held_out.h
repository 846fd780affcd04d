// SPDX-License-Identifier: Apache-2.0
// The CT "lambda auto" rule: held-out views (cross-validation over the views of the sinogram).
#pragma once

#include <functional>
#include <string>

#include "recofold/core/measurement.h"
#include "recofold/core/progress.h"
#include "recofold/ops/linear_operator.h"
#include "recofold/priors/prior.h"
#include "recofold/recon/lambda_sweep.h"

namespace recofold {

// Why not the discrepancy principle on CT: with exact (analytic) line
// integrals the discretised projector cannot reproduce the sinogram even
// without noise, and this model misfit exceeds the Poisson noise energy, so a
// plain discrepancy target is never reached (the sweep ends at its smallest
// lambda).
//
// The rule: every 6th view (views v with v mod 6 = 3) is held out; the same
// solver (same iterations, prior and box) runs on the other views on a lambda
// grid with factor 2 and warm starts, walking down from
// 10 sigma_e sqrt(trace(A^H A)/n) (sigma_e the Poisson noise per ray; 1e-3 of
// the rms line integral without noise) while the held-out misfit
// ||A_h x - y_h||^2 falls by more than 0.1 % per step (up instead when the
// first step down does not), at most `max_solves` solves. The best grid
// lambda (the largest within 0.1 % of the smallest held-out misfit: on a
// plateau the stronger prior) is refined by a parabola in log lambda through
// it and its two neighbours, then multiplied by (all views / training views),
// because the data term of the full problem is that much larger. Needs >= 12
// views (InputError field "lambda" otherwise). The rule text states the
// numbers.
struct HeldOutChoice {
  double lambda = 0.0;  // for all views
  std::string rule;
  LambdaCurve curve;  // lambda (training views), residual_squared (training misfit), score (held-out misfit)
  VecC warm_start;    // the training image at the best grid lambda (start of the final solve on all views)
};

// Makes the solver of the method for an operator and its data (the same
// settings as the final solve).
using SolveFactory = std::function<RegularisedSolve(const LinearOperator& a, const VecC& y)>;

HeldOutChoice choose_lambda_held_out_views(const Measurement& m, const Prior& prior, const SolveFactory& make_solve,
                                           int max_solves, const std::string& file = "",
                                           ProgressSink* progress = nullptr);

}  // namespace recofold
