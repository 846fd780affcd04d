// SPDX-License-Identifier: Apache-2.0
// Regularisation-weight sweeps with warm starts: the lambda curve (objective, residual, score per lambda).
#pragma once

#include <functional>
#include <string>
#include <vector>

#include "recofold/core/image_record.h"
#include "recofold/core/progress.h"
#include "recofold/ops/linear_operator.h"
#include "recofold/priors/prior.h"
#include "recofold/recon/solver_summary.h"

namespace recofold {

// Runs one regularised reconstruction with `prior` (its weight already set to
// the lambda of interest), starting from `x` (the warm start) and leaving the
// result in `x`. Typically a lambda wrapping solve_fista / solve_admm /
// solve_pdhg with fixed options, operator and measurement.
using RegularisedSolve = std::function<SolverSummary(const Prior& prior, VecC& x)>;
// A quality score of an image, e.g. PSNR against a known truth.
using ImageScore = std::function<double(const VecC& x)>;

struct LambdaPoint {
  double lambda = 0.0;
  double objective = 0.0;          // the solver's last recorded objective (NaN when not recorded)
  double residual_squared = 0.0;   // ||A x_lambda - y||^2, computed by the sweep
  double score = 0.0;              // score(x_lambda), NaN without a score callback
  int iterations = 0;
  Termination termination = Termination::kMaxIterations;
  double seconds = 0.0;
};

struct LambdaCurve {
  std::vector<LambdaPoint> points;  // in the order run
  std::vector<VecC> images;         // x_lambda per point when keep_images, else empty
  int best = -1;                    // index of the best score (-1 without scores)

  // Columns lambda, objective, residual_squared, score, iterations, seconds.
  Table table() const;
};

struct LambdaSweepOptions {
  // Start each lambda from the previous result (continuation). Run lambdas in
  // decreasing order for the usual benefit (large lambda = simple images first).
  bool warm_start = true;
  bool keep_images = false;            // keep every x_lambda in the curve (memory: one image per lambda)
  bool higher_score_is_better = true;  // PSNR/SSIM: true; NRMSE: false
};

// Solves for each lambda in `lambdas` (each > = 0, finite; else InputError
// "sweep.lambdas") on a clone of `prior` and records the curve. `x0` is the
// start of the first solve (zeros when empty). Progress counts lambdas.
LambdaCurve sweep_lambda(const LambdaSweepOptions& options, const LinearOperator& a, const VecC& y,
                         const Prior& prior, const std::vector<double>& lambdas, const RegularisedSolve& solve,
                         const VecC& x0 = VecC(), const ImageScore& score = nullptr, ProgressSink* progress = nullptr);

// start, start*ratio, start*ratio^2, ... (count values).
std::vector<double> geometric_lambdas(double start, double ratio, int count);

}  // namespace recofold
