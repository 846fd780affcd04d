// SPDX-License-Identifier: Apache-2.0
// "lambda auto": choosing the regularisation weight by Morozov's discrepancy principle.
#pragma once

#include <string>
#include <vector>

#include "recofold/core/progress.h"
#include "recofold/ops/linear_operator.h"
#include "recofold/priors/prior.h"
#include "recofold/recon/lambda_sweep.h"

namespace recofold {

// The rule (Morozov's discrepancy principle; from memory): choose lambda so that
// the data misfit equals the expected noise energy,
//   ||A x_lambda - y||^2 = T = safety * m * v,
// with m the number of measured values and v the noise variance per value:
// v = 2 sigma^2 for complex noise with standard deviation sigma per real and
// imaginary part (MRI k-space), v = sigma^2 for real noise. The misfit grows
// with lambda, so it is found by a short geometric sweep with warm starts:
// lambda_0 = lambda_start, lambda_{j+1} = ratio * lambda_j, going down while
// the misfit is above T (or up by 1/ratio while it is already below T at
// lambda_0) until T is bracketed; then, when `refine`, one more solve at the
// lambda interpolated linearly in (log lambda, log misfit) between the
// bracketing pair, warm-started from the larger lambda's image. Without
// refinement the result is the largest grid lambda whose misfit is <= T.
struct DiscrepancyOptions {
  double noise_sigma = 0.0;     // sigma > 0 (per real/imaginary part for complex noise); unused when target > 0
  Index measurement_count = 0;  // m; 0 = A's range size (set it when the range holds unmeasured zeros)
  bool complex_noise = true;    // v = 2 sigma^2 (true) or sigma^2 (false)
  double safety = 1.0;          // > 0, the factor on the expected noise energy (Morozov's tau; 1 - 1.1 usual)
  // First lambda; <= 0 means 10 sigma_e sqrt(trace(A^H A)/n): the size of
  // A^H(noise) per pixel times 10, with sigma_e = sqrt(T / (m v/sigma^2)) the
  // noise level implied by the target (sigma itself unless `target` is given)
  // and the trace from two seeded random probes. The sweep goes up or down
  // from there, so this only sets how many solves are needed.
  double lambda_start = 0.0;
  double ratio = 0.5;           // geometric factor per step, in (0, 1)
  int max_steps = 16;           // solves in the sweep (not counting the refinement), >= 2
  bool refine = true;           // the interpolated extra solve
  // > 0: use this misfit target T directly (e.g. transmission_noise_energy()
  // for CT, whose noise variance differs per ray); noise_sigma is then unused.
  double target = 0.0;

  std::vector<std::string> validate() const;  // "discrepancy.noise_sigma = 0; must be > 0", ...
};

struct DiscrepancyChoice {
  double lambda = 0.0;                 // the chosen weight
  double target = 0.0;                 // T
  double residual_squared = 0.0;       // ||A x - y||^2 of the returned image
  bool bracketed = false;              // false: T was not crossed within max_steps (lambda is the closest end)
  LambdaCurve curve;                   // every solve, the refinement last
  std::string rule;                    // one line for `info` / provenance, stating the rule and numbers
};

// E||noise||^2 = safety * m * (2 sigma^2 or sigma^2).
double discrepancy_target(Index measurement_count, double sigma, bool complex_noise, double safety = 1.0);

// Expected noise energy of a transmission (CT) sinogram p = -ln(N / I0) with
// Poisson counts N: var(p_i) ~ exp(p_i) / I0 per ray (delta method; from
// memory), summed over the rays: sum_i exp(max(p_i, 0)) / I0. Real parts of
// `sinogram` are used; electronic noise is not included.
double transmission_noise_energy(const VecC& sinogram, double photons_per_ray);

// Runs the rule. `x`: start on input (zeros when empty), the image at the
// chosen lambda on output. Throws InputError for invalid options.
DiscrepancyChoice choose_lambda_discrepancy(const DiscrepancyOptions& options, const LinearOperator& a,
                                            const VecC& y, const Prior& prior, const RegularisedSolve& solve,
                                            VecC& x, ProgressSink* progress = nullptr);

}  // namespace recofold
