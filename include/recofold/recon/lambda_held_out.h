// SPDX-License-Identifier: Apache-2.0
// The CT "lambda auto" rule: held-out views (cross-validation over the views of the sinogram).
#pragma once

#include <functional>
#include <string>
#include <vector>

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
// E = ||A_h x - y_h||^2 falls by more than a tenth of its standard error (up
// instead when the first step down does not), then up from the largest
// lambda run until E exceeds the smallest misfit by one standard error, at
// most `max_solves` solves. The choice is the one-standard-error rule of
// cross-validation (Hastie, Tibshirani & Friedman, The Elements of
// Statistical Learning, 2nd ed., sec. 7.10, from memory): the largest lambda
// whose held-out misfit is within one standard error of the smallest
// (one_standard_error_choice below), interpolated in log lambda to the
// crossing E = E_min + SE, then multiplied by (all views / training views),
// because the data term of the full problem is that much larger. Needs >= 12
// views (InputError field "lambda" otherwise). The rule text states the
// numbers.
//
// The standard error is that of the smallest misfit itself: E is a sum over
// the held-out rays of the squared residuals q_i, which given the training
// views are independent (the held-out noise is independent of the image), so
// SE(E) = sqrt(n) sd(q_i) (misfit_standard_error). A paired comparison (the SE
// of E(lambda) - E_min from the per-ray differences) is the statistically
// right uncertainty of a difference between two lambdas: it cancels the
// held-out noise energy common to every lambda and was about 6x smaller on a
// 128^2, 60-view textured object. With it the rule becomes a one-sigma test
// that keeps lambda close to the held-out minimum; the textbook rule's larger
// SE deliberately favours the stronger prior, and the held-out (sinogram)
// minimum lies below the image-error optimum on every object we measured
// (tests/cli/study_ct_lambda_auto.py states the figures).
struct OneStandardErrorChoice {
  int smallest = -1;            // index of the smallest misfit
  int chosen = -1;              // index of the largest lambda within one SE of it
  int beyond = -1;              // the next larger lambda run (misfit above the threshold), -1 when none
  double standard_error = 0.0;  // SE of the smallest misfit
  double threshold = 0.0;       // smallest misfit + standard_error
  double lambda = 0.0;          // chosen's lambda, interpolated in log lambda toward beyond's at the threshold
};

// sqrt(n) times the sample standard deviation of the per-ray squared
// residuals: the standard error of their sum (0 for fewer than 2 rays).
double misfit_standard_error(const std::vector<double>& squared_residuals);

// The one-standard-error choice over lambdas (any order, > 0) with their
// per-ray squared held-out residuals (misfit = their sum). Requires equal,
// non-empty sizes (RECOFOLD_CHECK: a caller error).
OneStandardErrorChoice one_standard_error_choice(const std::vector<double>& lambdas,
                                                 const std::vector<std::vector<double>>& squared_residuals);

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
