// SPDX-License-Identifier: Apache-2.0
// ISTA (proximal gradient) on any operator and prior.
#include "recofold/recon/ista.h"

#include <cmath>
#include <cstdio>
#include <limits>

#include "recofold/core/field_error.h"
#include "solver_support.h"

namespace recofold {

std::vector<std::string> IstaOptions::validate() const {
  return internal::validate_proximal_gradient("ista", max_iterations, step_size, power_iterations,
                                              relative_tolerance);
}

SolverSummary solve_ista(const IstaOptions& options, const LinearOperator& a, const Prior& prior, const VecC& y,
                         VecC& x, ProgressSink* progress) {
  throw_if_invalid(parse_field_messages(options.validate()));
  internal::prepare_solve("ista", a, y, x);
  SolverSummary summary;
  summary.solver = "ista";
  internal::Stopwatch total, lap;
  const double step =
      internal::proximal_gradient_step(a, options.step_size, options.power_iterations, options.power_seed, summary);
  // The same arithmetic as gradient_dc_step + ProxPriorStep in the unrolled
  // scheme: r = A x - y, z = x - s A^H r, x+ = prox(z, s). The residual of x+
  // is reused by the next gradient, so the objective costs no extra A apply.
  VecC r, z, x_new, g;  // sized once, reused (no allocation per iteration)
  internal::reserve_records(summary, options.max_iterations);
  internal::data_residual(a, x, y, r);
  Termination term = Termination::kMaxIterations;
  std::string message = "reached max_iterations";
  for (int k = 1; k <= options.max_iterations; ++k) {
    internal::gradient_step_from_residual(a, r, x, step, z, g);
    prior.prox_at(z, step, static_cast<uint64_t>(k), x_new);
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
