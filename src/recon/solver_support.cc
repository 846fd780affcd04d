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
  const double d = std::sqrt(squared_distance(now, before));
  const double n = std::sqrt(norm_squared(now));
  return d / std::max(n, 1e-30);
}

double squared_distance(const VecC& a, const VecC& b) {
  RECOFOLD_CHECK(a.size() == b.size()) << "squared_distance of sizes " << a.size() << " and " << b.size();
  const Index n = a.size();
  double s = 0.0;
  // The float difference an expression a - b would hold, squared in double (as norm_squared(a - b)).
  auto term = [&](Index i) {
    const cfloat d = a[i] - b[i];
    return double(d.real()) * d.real() + double(d.imag()) * d.imag();
  };
  // Explicit serial branch (as in norm_squared): no one-thread OpenMP regions in solver loops.
  if (n > 65536) {
#pragma omp parallel for reduction(+ : s) schedule(static)
    for (Index i = 0; i < n; ++i) s += term(i);
  } else {
    for (Index i = 0; i < n; ++i) s += term(i);
  }
  return s;
}

double real_dot_of_differences(const VecC& a, const VecC& b, const VecC& c, const VecC& d) {
  RECOFOLD_CHECK(a.size() == b.size() && b.size() == c.size() && c.size() == d.size())
      << "real_dot_of_differences of unequal sizes";
  const Index n = a.size();
  double s = 0.0;
  // The same float differences an expression a - b would form, then the product in double.
  auto term = [&](Index i) {
    const cfloat u = a[i] - b[i], v = c[i] - d[i];
    return double(u.real()) * v.real() + double(u.imag()) * v.imag();
  };
  if (n > 65536) {
#pragma omp parallel for reduction(+ : s) schedule(static)
    for (Index i = 0; i < n; ++i) s += term(i);
  } else {
    for (Index i = 0; i < n; ++i) s += term(i);
  }
  return s;
}

void reserve_records(SolverSummary& summary, int max_iterations) {
  summary.iterations.reserve(static_cast<size_t>(std::clamp(max_iterations, 0, 1 << 20)));
}

void data_residual(const LinearOperator& a, const VecC& x, const VecC& y, VecC& r) {
  a.apply(x, r);
  r -= y;
}

void gradient_step_from_residual(const LinearOperator& a, const VecC& r, const VecC& x, double step, VecC& z, VecC& g) {
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
  thread_local std::string status;
  if (status.capacity() < sizeof buf) status.reserve(sizeof buf);
  status.assign(buf);
  progress->update(done, total, status);
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
