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
  // Solves in the lambda-auto sweep (DiscrepancyOptions::max_steps): 16 for MRI, 14 for CT when 0.
  int lambda_steps = 0;

  // Every violation as "--flag ...: reason" messages (flags: --method,
  // --prior, --lambda, --iters, --levels, --wavelet); empty = valid.
  // `modality` is "mri" or "ct"; `image_shape` the reconstruction grid.
  std::vector<std::string> validate(const std::string& modality, const Shape& image_shape) const;
};

// The default number of iterations of each method (see ReconRequest).
int default_iterations(SolverMethod method);

// "lambda auto" rules.
//
// MRI: Morozov's discrepancy principle (lambda_discrepancy.h) with the
// file's noise sigma (complex noise, v = 2 sigma^2) and m = sampled points x
// coils: ||A x - y||^2 = 2 m sigma^2.
//
// CT, "floor-corrected discrepancy": with exact (analytic) line integrals the
// discretised projector cannot reproduce the sinogram even without noise,
// and this model misfit exceeds the Poisson noise energy, so the plain target
// is never reached (the sweep would end at its smallest lambda). The target
// is therefore
//   T = F + E,
// E = the expected transmission noise energy sum_i exp(p_i) / I0
// (transmission_noise_energy; 0 for a noiseless file), and F = the misfit
// floor: ||A x_0 - y||^2 of the same solver with the same iterations and box
// constraint but lambda = 0 (what the solver reaches without regularisation).
// For a noiseless file (E = 0) T = 1.1 F. lambda then adds about one noise
// energy of misfit above what the data can be fitted to, which is the
// discrepancy principle's intent with the model error moved into the floor.
// The rule text states which rule was used and its numbers.

// The outcome.
struct ReconResult {
  VecC image;  // [ny, nx] flat, complex (MRI) or real in the real parts (CT)
  Index ny = 0, nx = 0;
  SolverSummary summary;  // the solve that produced `image` (for auto: the solve at the chosen lambda)
  double lambda = 0.0;    // the weight used (0 with prior none)
  // "given" / "none (no prior)" / the discrepancy rule with its numbers
  // (DiscrepancyChoice::rule, prefixed by the CT floor when used).
  std::string lambda_rule;
  std::string lambda_rule_name;  // "given", "none", "discrepancy", "floor-corrected discrepancy"
  std::optional<DiscrepancyChoice> choice;  // set for lambda auto
  double misfit_floor = 0.0;                // CT auto: F above (0 otherwise)
  double noise_energy = 0.0;                // E (CT) or 2 m sigma^2 (MRI) for auto; 0 otherwise
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
