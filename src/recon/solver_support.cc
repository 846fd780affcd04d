// SPDX-License-Identifier: Apache-2.0
// Private helpers shared by the iterative solvers.
#include "solver_support.h"

#include <algorithm>
#include <cstdio>

#include "recofold/core/error.h"
#include "recofold/priors/constrained.h"
#include "recofold/priors/zero_prior.h"

namespace recofold {
namespace internal {

void prepare_solve(const std::string& solver, const LinearOperator& a, const VecC& y, VecC& x) {
  if (y.size() != a.range_size())
    throw InputError("", solver + ".measurement",
                     "has " + std::to_string(y.size()) + " values, operator '" + a.name() + "' expects " +
                         a.range_shape().to_string());
  if (x.size() == 0) {
    x.setZero(a.domain_size());
  } else if (x.size() != a.domain_size()) {
    throw InputError("", solver + ".initial_image",
                     "has " + std::to_string(x.size()) + " values, operator '" + a.name() + "' expects " +
                         a.domain_shape().to_string());
  }
}

double relative_change(const VecC& now, const VecC& before) {
  const double d = std::sqrt(norm_squared(now - before));
  const double n = std::sqrt(norm_squared(now));
  return d / std::max(n, 1e-30);
}

void data_residual(const LinearOperator& a, const VecC& x, const VecC& y, VecC& r) {
  a.apply(x, r);
  r -= y;
}

void gradient_step_from_residual(const LinearOperator& a, const VecC& r, const VecC& x, double step, VecC& z) {
  VecC g;
  a.adjoint(r, g);
  z = x - static_cast<float>(step) * g;
}

void report_progress(ProgressSink* progress, int done, int total, const IterationRecord& rec) {
  if (!progress) return;
  char buf[96];
  if (std::isfinite(rec.objective))
    std::snprintf(buf, sizeof buf, "obj %.6g change %.2e", rec.objective, rec.relative_change);
  else
    std::snprintf(buf, sizeof buf, "change %.2e", rec.relative_change);
  progress->update(done, total, buf);
}

void finish_summary(SolverSummary& summary, Termination t, const std::string& message, double total_seconds,
                    ProgressSink* progress) {
  summary.termination = t;
  summary.message = message;
  summary.total_seconds = total_seconds;
  if (progress) progress->finish(summary.brief_report());
}

PriorParts split_prior(const Prior& prior) {
  PriorParts parts;
  const Prior* inner = &prior;
  if (const auto* c = dynamic_cast<const ConstrainedPrior*>(&prior)) {
    parts.box = &c->box();
    inner = &c->inner();
  }
  if (inner->analysis_operator())
    parts.analysis = inner;
  else
    parts.supported = dynamic_cast<const ZeroPrior*>(inner) != nullptr;
  return parts;
}

std::vector<std::string> validate_proximal_gradient(const std::string& solver, int max_iterations, double step_size,
                                                    int power_iterations, double relative_tolerance) {
  std::vector<std::string> e;
  if (max_iterations < 1)
    e.push_back(solver + ".max_iterations = " + std::to_string(max_iterations) + "; must be >= 1");
  if (!std::isfinite(step_size)) e.push_back(solver + ".step_size = " + std::to_string(step_size) + "; must be finite");
  if (power_iterations < 1)
    e.push_back(solver + ".power_iterations = " + std::to_string(power_iterations) + "; must be >= 1");
  if (!(relative_tolerance >= 0.0) || !std::isfinite(relative_tolerance))
    e.push_back(solver + ".relative_tolerance = " + std::to_string(relative_tolerance) + "; must be finite and >= 0");
  return e;
}

double proximal_gradient_step(const LinearOperator& a, double step_size, int power_iterations, uint64_t power_seed,
                              SolverSummary& summary) {
  double step = step_size;
  if (step <= 0.0) {
    const double lip = estimate_norm_squared(a, power_iterations, power_seed);
    summary.values["lipschitz"] = lip;
    step = 1.0 / (1.05 * std::max(lip, 1e-30));
  }
  summary.values["step_size"] = step;
  return step;
}

}  // namespace internal
}  // namespace recofold
