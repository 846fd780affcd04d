// SPDX-License-Identifier: Apache-2.0
// One call from a measurement record to a regularised reconstruction: operator, prior, solver and "lambda auto".
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "recofold/core/measurement.h"
#include "recofold/core/progress.h"
#include "recofold/priors/prior_spec.h"
#include "recofold/recon/lambda_discrepancy.h"
#include "recofold/recon/solver_method.h"
#include "recofold/recon/solver_summary.h"

namespace recofold {

// What to run on a measurement. The operator comes from the measurement:
// MRI: the SENSE operator of ops/fourier.h (mask x centred FFT x the file's
// coil maps), y = the sampled k-space; CT: Joseph's projector of
// ops/joseph_projector.h with the attenuation scale mu, y = the sinogram, so
// the image is in phantom intensity units either way.
//
// Solver settings (those of tests/unit/recon_end_to_end_test.cc, where they
// beat the baselines by >= 8 dB on the head phantom):
//   cg    CG on the normal equations (CG-SENSE for MRI), 12 iterations by
//         default, lambda = Tikhonov weight with prior l2;
//   ista  step 1/(1.05 L), 100 iterations by default;
//   fista 60 iterations by default, fixed count (relative tolerance 0: the
//         change is noisy under cycle spinning), adaptive restart;
//   admm  30 outer iterations by default, 4 inner CG steps, relative tolerance 1e-4;
//   pdhg  150 iterations by default, relative tolerance 1e-4, automatic steps.
struct ReconRequest {
  SolverMethod method = SolverMethod::kFista;
  // prior.kind, its options and prior.box (--nonneg). prior.lambda is the
  // weight when lambda_auto is false.
  PriorSpec prior;
  bool lambda_auto = false;
  // Iterations of the solver (of every solve in the lambda-auto sweep);
  // 0 = the method's default above; otherwise >= 1.
  int iterations = 0;
  // Solves in the lambda-auto sweep: 0 = 16 for MRI (DiscrepancyOptions::max_steps), 12 for CT.
  int lambda_steps = 0;

  // Every violation as "--flag ...: reason" messages (flags: --method,
  // --prior, --lambda, --iters, --levels, --wavelet); empty = valid.
  // `modality` is "mri" or "ct"; `image_shape` the reconstruction grid.
  std::vector<std::string> validate(Modality modality, const Shape& image_shape) const;
};

// The default number of iterations of each method (see ReconRequest).
int default_iterations(SolverMethod method);

// "lambda auto" rules.
//
// MRI: Morozov's discrepancy principle (lambda_discrepancy.h) with the
// file's noise sigma (complex noise, v = 2 sigma^2) and m = sampled points x
// coils: ||A x - y||^2 = 2 m sigma^2.
//
// CT, "held-out views" (cross-validation): with exact (analytic) line
// integrals the discretised projector cannot reproduce the sinogram even
// without noise, and this model misfit exceeds the Poisson noise energy, so a
// plain discrepancy target is never reached (the sweep ends at its smallest
// lambda). Instead every 6th view (views v with v mod 6 = 3) is held out; the
// same solver (same iterations, prior and box) runs on the other views on a
// lambda grid with factor 2 and warm starts, walking down from
// 10 sigma_e sqrt(trace(A^H A)/n) (sigma_e the Poisson noise per ray) while
// the held-out misfit ||A_h x - y_h||^2 falls by more than 0.1 % per step (up
// instead when the first step down does not), at most lambda_steps solves (12
// by default). The best grid lambda (the largest within 0.1 % of the smallest
// held-out misfit: on a plateau the stronger prior) is refined by a parabola in log lambda through it and its two
// neighbours, then multiplied by (all views / training views), because the
// data term of the full problem is that much larger; the final solve uses all
// views, warm-started from the best training image. Needs >= 12 views.
// The rule text states which rule was used and its numbers.

// The outcome.
struct ReconResult {
  VecC image;  // [ny, nx] flat, complex (MRI) or real in the real parts (CT)
  Index ny = 0, nx = 0;
  SolverSummary summary;  // the solve that produced `image` (for auto: the solve at the chosen lambda)
  double lambda = 0.0;    // the weight used (0 with prior none)
  // "given" / "none (no prior)" / the rule with its numbers (MRI:
  // DiscrepancyChoice::rule; CT: the held-out-views rule).
  std::string lambda_rule;
  std::string lambda_rule_name;
  // "discrepancy" (MRI auto), "held-out views" (CT auto), "given", "none".
  // lambda auto: every solve of the rule; MRI: residual_squared = misfit (the
  // curve of choose_lambda_discrepancy); CT: residual_squared = training-view
  // misfit, score = held-out misfit, best = the best grid point.
  std::optional<LambdaCurve> lambda_curve;
  double lambda_target = 0.0;  // MRI auto: the discrepancy target 2 m sigma^2 (0 otherwise)
  std::string operator_name;                // the operator's name()
  std::string description;                  // one line: method, prior, lambda, iterations
  double seconds = 0.0;                     // wall time of everything above
};

// Builds the operator and the prior from `m`, runs the request and returns
// the image. `iterations`: progress of each solver run (iterations);
// `lambda_progress`: progress of the lambda-auto sweep (solves). Both may be
// null. Throws InputError (file `file`, field = the flag) for an invalid
// request or a measurement that does not fit it.
ReconResult reconstruct_measurement(const Measurement& m, const ReconRequest& request, const std::string& file = "",
                                    ProgressSink* iterations = nullptr, ProgressSink* lambda_progress = nullptr);

}  // namespace recofold
