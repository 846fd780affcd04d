// SPDX-License-Identifier: Apache-2.0
// FISTA with adaptive (gradient-scheme) restart on any operator and prior.
#include "recofold/recon/fista.h"

#include <cmath>
#include <cstdio>
#include <limits>

#include "recofold/core/field_error.h"
#include "recofold/recon/unrolled.h"
#include "solver_support.h"

namespace recofold {

std::vector<std::string> FistaOptions::validate() const {
  return internal::validate_proximal_gradient("fista", max_iterations, step_size, power_iterations,
                                              relative_tolerance);
}

SolverSummary solve_fista(const FistaOptions& options, const LinearOperator& a, const Prior& prior, const VecC& y,
                          VecC& x, ProgressSink* progress) {
  throw_if_invalid(parse_field_messages(options.validate()));
  internal::prepare_solve("fista", a, y, x);
  SolverSummary summary;
  summary.solver = "fista";
  internal::Stopwatch total, lap;
  const double step =
      internal::proximal_gradient_step(a, options.step_size, options.power_iterations, options.power_seed, summary);
  const double nan = std::numeric_limits<double>::quiet_NaN();
  // Every vector the loop touches is sized in the first iteration and reused
  // (no allocation per iteration; tests/unit/recon_allocation_test.cc).
  VecC v = x, z, x_new, r;
  DcWorkspace dc;
  internal::reserve_records(summary, options.max_iterations);
  double t = 1.0;
  int restarts = 0;
  Termination term = Termination::kMaxIterations;
  std::string message = "reached max_iterations";
  for (int k = 1; k <= options.max_iterations; ++k) {
    gradient_dc_step(a, y, v, step, z, dc);
    prior.prox_at(z, step, static_cast<uint64_t>(k), x_new);
    if (options.adaptive_restart && internal::real_dot_of_differences(v, x_new, x_new, x) > 0.0) {
      t = 1.0;  // restart: momentum of the next extrapolation is 0
      ++restarts;
    }
    const double t_next = 0.5 * (1.0 + std::sqrt(1.0 + 4.0 * t * t));
    extrapolate(x_new, x, (t - 1.0) / t_next, v);
    t = t_next;
    IterationRecord rec;
    rec.iteration = k;
    rec.relative_change = internal::relative_change(x_new, x);
    rec.objective = rec.data_residual = rec.gap = nan;
    if (options.record_objective) {
      internal::data_residual(a, x_new, y, r);
      const double r2 = norm_squared(r);
      rec.data_residual = std::sqrt(r2);
      rec.objective = 0.5 * r2 + prior.value(x_new);
    }
    x.swap(x_new);
    rec.seconds = lap.lap();
    summary.iterations.push_back(rec);
    internal::report_progress(progress, k, options.max_iterations, rec);
    if (!std::isfinite(rec.relative_change) || (options.record_objective && !std::isfinite(rec.data_residual))) {
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
  summary.values["restarts"] = restarts;
  internal::finish_summary(summary, term, message, total.lap(), progress);
  return summary;
}

}  // namespace recofold
