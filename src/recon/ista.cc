// SPDX-License-Identifier: Apache-2.0
// ISTA (proximal gradient) on any operator and prior.
#include "recofold/recon/ista.h"

#include <cmath>
#include <cstdio>
#include <limits>

#include "recofold/priors/option_errors.h"
#include "solver_support.h"

namespace recofold {

std::vector<std::string> IstaOptions::validate() const {
  std::vector<std::string> e;
  if (max_iterations < 1) e.push_back("ista.max_iterations = " + std::to_string(max_iterations) + "; must be >= 1");
  if (!std::isfinite(step_size)) e.push_back("ista.step_size = " + std::to_string(step_size) + "; must be finite");
  if (power_iterations < 1)
    e.push_back("ista.power_iterations = " + std::to_string(power_iterations) + "; must be >= 1");
  if (!(relative_tolerance >= 0.0) || !std::isfinite(relative_tolerance))
    e.push_back("ista.relative_tolerance = " + std::to_string(relative_tolerance) + "; must be finite and >= 0");
  return e;
}

SolverSummary solve_ista(const IstaOptions& options, const LinearOperator& a, const Prior& prior, const VecC& y,
                         VecC& x, ProgressSink* progress) {
  throw_if_invalid(options.validate());
  internal::prepare_solve("ista", a, y, x);
  SolverSummary summary;
  summary.solver = "ista";
  internal::Stopwatch total, lap;
  double step = options.step_size;
  if (step <= 0.0) {
    const double lip = estimate_norm_squared(a, options.power_iterations, options.power_seed);
    summary.values["lipschitz"] = lip;
    step = 1.0 / (1.05 * std::max(lip, 1e-30));
  }
  summary.values["step_size"] = step;
  // The same arithmetic as gradient_dc_step + ProxPriorStep in the unrolled
  // scheme: r = A x - y, z = x - s A^H r, x+ = prox(z, s). The residual of x+
  // is reused by the next gradient, so the objective costs no extra A apply.
  VecC r, z, x_new;
  internal::data_residual(a, x, y, r);
  Termination term = Termination::kMaxIterations;
  std::string message = "reached max_iterations";
  for (int k = 1; k <= options.max_iterations; ++k) {
    internal::gradient_step_from_residual(a, r, x, step, z);
    prior.prox(z, step, x_new);
    internal::data_residual(a, x_new, y, r);
    IterationRecord rec;
    rec.iteration = k;
    const double r2 = norm_squared(r);
    rec.data_residual = std::sqrt(r2);
    rec.objective = options.record_objective ? 0.5 * r2 + prior.value(x_new) : std::numeric_limits<double>::quiet_NaN();
    rec.gap = std::numeric_limits<double>::quiet_NaN();
    rec.relative_change = internal::relative_change(x_new, x);
    x.swap(x_new);
    rec.seconds = lap.lap();
    summary.iterations.push_back(rec);
    internal::report_progress(progress, k, options.max_iterations, rec);
    if (!std::isfinite(rec.data_residual) || !std::isfinite(rec.relative_change)) {
      term = Termination::kNonFinite;
      message = "non-finite value at iteration " + std::to_string(k);
      break;
    }
    if (options.relative_tolerance > 0.0 && rec.relative_change <= options.relative_tolerance) {
      term = Termination::kConverged;
      char buf[96];
      std::snprintf(buf, sizeof buf, "relative change %.2e <= %.2e", rec.relative_change, options.relative_tolerance);
      message = buf;
      break;
    }
  }
  internal::finish_summary(summary, term, message, total.lap(), progress);
  return summary;
}

}  // namespace recofold
