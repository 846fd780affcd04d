// SPDX-License-Identifier: Apache-2.0
// Discrepancy-principle choice of lambda by a geometric warm-started sweep.
#include "recofold/recon/lambda_discrepancy.h"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/core/field_error.h"
#include "solver_support.h"

namespace recofold {

std::vector<std::string> DiscrepancyOptions::validate() const {
  std::vector<std::string> e;
  if (!std::isfinite(target) || target < 0.0)
    e.push_back("discrepancy.target = " + std::to_string(target) + "; must be finite and >= 0");
  if (target <= 0.0 && (!(noise_sigma > 0.0) || !std::isfinite(noise_sigma)))
    e.push_back("discrepancy.noise_sigma = " + std::to_string(noise_sigma) + "; must be finite and > 0");
  if (measurement_count < 0)
    e.push_back("discrepancy.measurement_count = " + std::to_string(measurement_count) + "; must be >= 0");
  if (!(safety > 0.0) || !std::isfinite(safety))
    e.push_back("discrepancy.safety = " + std::to_string(safety) + "; must be finite and > 0");
  if (!std::isfinite(lambda_start))
    e.push_back("discrepancy.lambda_start = " + std::to_string(lambda_start) + "; must be finite");
  if (!(ratio > 0.0 && ratio < 1.0)) e.push_back("discrepancy.ratio = " + std::to_string(ratio) + "; must be in (0, 1)");
  if (max_steps < 2) e.push_back("discrepancy.max_steps = " + std::to_string(max_steps) + "; must be >= 2");
  return e;
}

double discrepancy_target(Index measurement_count, double sigma, bool complex_noise, double safety) {
  return safety * static_cast<double>(measurement_count) * (complex_noise ? 2.0 : 1.0) * sigma * sigma;
}

double transmission_noise_energy(const VecC& sinogram, double photons_per_ray) {
  double sum = 0.0;
  for (Index i = 0; i < sinogram.size(); ++i) sum += std::exp(std::max(double(sinogram[i].real()), 0.0));
  return sum / photons_per_ray;
}

namespace {

double automatic_start(const LinearOperator& a, double sigma) {
  // 10 sigma times the RMS column norm of A, sqrt(trace(A^H A) / n), from two
  // Hutchinson probes: the scale of A^H(noise) per pixel, i.e. of the lambda
  // at which an l1-type prior starts to suppress noise.
  Rng rng(2718);
  double ratio = 0.0;
  for (int probe = 0; probe < 2; ++probe) {
    VecC z(a.domain_size()), az;
    for (Index i = 0; i < z.size(); ++i) z[i] = cfloat(float(rng.normal()), float(rng.normal()));
    a.apply(z, az);
    ratio += 0.5 * norm_squared(az) / std::max(norm_squared(z), 1e-30);
  }
  const double start = 10.0 * sigma * std::sqrt(ratio);
  return start > 0.0 && std::isfinite(start) ? start : 1.0;
}

}  // namespace

DiscrepancyChoice choose_lambda_discrepancy(const DiscrepancyOptions& options, const LinearOperator& a,
                                            const VecC& y, const Prior& prior, const RegularisedSolve& solve,
                                            VecC& x, ProgressSink* progress) {
  throw_if_invalid(parse_field_messages(options.validate()));
  internal::prepare_solve("discrepancy", a, y, x);
  const Index m = options.measurement_count > 0 ? options.measurement_count : a.range_size();
  DiscrepancyChoice choice;
  choice.target = options.target > 0.0
                      ? options.target
                      : discrepancy_target(m, options.noise_sigma, options.complex_noise, options.safety);
  const double target = choice.target;
  const double v_factor = options.complex_noise ? 2.0 : 1.0;
  const double sigma_eff = std::sqrt(target / (static_cast<double>(m) * v_factor));
  const double start = options.lambda_start > 0.0 ? options.lambda_start : automatic_start(a, sigma_eff);

  // The sweep is run here (not through sweep_lambda) so that the images of
  // the bracketing pair stay available for the refinement's warm start.
  std::unique_ptr<Prior> p = prior.clone();
  VecC r;
  auto solve_at = [&](double lambda, VecC& image) {
    internal::Stopwatch watch;
    p->set_weight(lambda);
    const SolverSummary s = solve(*p, image);
    LambdaPoint pt;
    pt.lambda = lambda;
    pt.objective = s.iterations.empty() ? std::nan("") : s.iterations.back().objective;
    internal::data_residual(a, image, y, r);
    pt.residual_squared = norm_squared(r);
    pt.score = std::nan("");
    pt.iterations = static_cast<int>(s.iterations.size());
    pt.termination = s.termination;
    pt.seconds = watch.lap();
    choice.curve.points.push_back(pt);
    if (progress) {
      char buf[96];
      std::snprintf(buf, sizeof buf, "lambda %.3g misfit/target %.3f", lambda, pt.residual_squared / target);
      progress->update(static_cast<int64_t>(choice.curve.points.size()), options.max_steps + 1, buf);
    }
    return pt.residual_squared;
  };

  VecC current = x;
  double lam = start;
  double res = solve_at(lam, current);
  const bool going_down = res > target;
  // Keep the last two (lambda, misfit, image) to bracket T.
  double prev_lam = lam, prev_res = res;
  VecC prev_image = current;
  bool bracketed = false;
  for (int step = 1; step < options.max_steps; ++step) {
    prev_lam = lam;
    prev_res = res;
    prev_image = current;
    lam = going_down ? lam * options.ratio : lam / options.ratio;
    res = solve_at(lam, current);
    if (going_down ? res <= target : res > target) {
      bracketed = true;
      break;
    }
  }
  choice.bracketed = bracketed;
  // (hi: misfit above T, lo: misfit <= T) of the bracketing pair.
  double hi_lam, hi_res, lo_lam, lo_res;
  const VecC* hi_image;
  const VecC* lo_image;
  if (going_down) {
    hi_lam = prev_lam, hi_res = prev_res, hi_image = &prev_image;
    lo_lam = lam, lo_res = res, lo_image = &current;
  } else {
    hi_lam = lam, hi_res = res, hi_image = &current;
    lo_lam = prev_lam, lo_res = prev_res, lo_image = &prev_image;
  }
  char buf[320];
  if (!bracketed) {
    // Not crossed: keep the end of the sweep closest to T.
    choice.lambda = lam;
    choice.residual_squared = res;
    x = current;
  } else if (options.refine && hi_res > 0.0 && lo_res > 0.0 && hi_res != lo_res) {
    const double t = (std::log(target) - std::log(lo_res)) / (std::log(hi_res) - std::log(lo_res));
    const double lam_star = std::exp(std::log(lo_lam) + t * (std::log(hi_lam) - std::log(lo_lam)));
    VecC refined = *hi_image;
    const double res_star = solve_at(lam_star, refined);
    choice.lambda = lam_star;
    choice.residual_squared = res_star;
    x = refined;
  } else {
    choice.lambda = lo_lam;
    choice.residual_squared = lo_res;
    x = *lo_image;
  }
  if (options.target > 0.0) {
    std::snprintf(buf, sizeof buf,
                  "discrepancy principle: ||Ax-y||^2 = given noise energy %.5g; geometric sweep x%.3g from %.4g with "
                  "warm starts, %zu solves%s; lambda = %.5g, misfit %.5g",
                  target, going_down ? options.ratio : 1.0 / options.ratio, start, choice.curve.points.size(),
                  !bracketed ? ", target not bracketed" : (options.refine ? ", log-interpolated" : ""), choice.lambda,
                  choice.residual_squared);
    choice.rule = buf;
    return choice;
  }
  std::snprintf(buf, sizeof buf,
                "discrepancy principle: ||Ax-y||^2 = %.3g * m * %s (m = %lld, sigma = %.4g, target %.5g); "
                "geometric sweep x%.3g from %.4g with warm starts, %zu solves%s; lambda = %.5g, misfit %.5g",
                options.safety, options.complex_noise ? "2 sigma^2" : "sigma^2", static_cast<long long>(m),
                options.noise_sigma, target, going_down ? options.ratio : 1.0 / options.ratio, start,
                choice.curve.points.size(),
                !bracketed ? ", target not bracketed" : (options.refine ? ", log-interpolated" : ""), choice.lambda,
                choice.residual_squared);
  choice.rule = buf;
  return choice;
}

}  // namespace recofold
