// SPDX-License-Identifier: Apache-2.0
// Conjugate gradients (generic Hermitian solver) and the least-squares / Tikhonov solver on an operator.
#include "recofold/recon/cg.h"

#include <cmath>
#include <cstdio>
#include <limits>

#include "recofold/core/error.h"
#include "recofold/core/field_error.h"
#include "solver_support.h"

namespace recofold {

CgResult conjugate_gradient(const std::function<void(const VecC&, VecC&)>& apply_h, const VecC& b, VecC& x,
                            int max_iterations, double tolerance,
                            const std::function<bool(int, const VecC&, double)>& after_iteration,
                            CgWorkspace* workspace) {
  CgResult res;
  if (x.size() == 0) x.setZero(b.size());
  const double bnorm = std::sqrt(norm_squared(b));
  if (bnorm == 0.0) {
    x.setZero(b.size());
    res.converged = true;
    return res;
  }
  CgWorkspace local;
  CgWorkspace& ws = workspace ? *workspace : local;
  VecC& r = ws.r;
  VecC& p = ws.p;
  VecC& hp = ws.hp;
  apply_h(x, hp);
  r = b - hp;
  p = r;
  double rr = norm_squared(r);
  res.relative_residual = std::sqrt(rr) / bnorm;
  if (res.relative_residual <= tolerance) {
    res.converged = true;
    return res;
  }
  for (int k = 1; k <= max_iterations; ++k) {
    apply_h(p, hp);
    const double php = dot(p, hp).real();
    if (!(php > 0.0)) break;  // H is singular along p (or numerically so): x is as good as it gets
    const float alpha = static_cast<float>(rr / php);
    x += alpha * p;
    r -= alpha * hp;
    const double rr_new = norm_squared(r);
    res.iterations = k;
    res.relative_residual = std::sqrt(rr_new) / bnorm;
    const bool done = res.relative_residual <= tolerance;
    if (after_iteration && !after_iteration(k, x, res.relative_residual)) break;
    if (done) {
      res.converged = true;
      break;
    }
    p = r + static_cast<float>(rr_new / rr) * p;
    rr = rr_new;
  }
  return res;
}

CgResult solve_regularised_normal(const LinearOperator& a, const VecC& aty, const VecC& z, double mu, VecC& x,
                                  int max_iterations, double tolerance, CgWorkspace* workspace) {
  const float m = static_cast<float>(mu);
  CgWorkspace local;
  CgWorkspace& ws = workspace ? *workspace : local;
  ws.b = aty + m * z;
  // Two captured pointers: small enough for std::function's in-place storage (no allocation).
  const LinearOperator* op = &a;
  const std::function<void(const VecC&, VecC&)> h = [op, m](const VecC& in, VecC& out) {
    op->normal(in, out);
    out += m * in;
  };
  return conjugate_gradient(h, ws.b, x, max_iterations, tolerance, nullptr, &ws);
}

std::vector<std::string> CgOptions::validate() const {
  std::vector<std::string> e;
  if (max_iterations < 1) e.push_back("cg.max_iterations = " + std::to_string(max_iterations) + "; must be >= 1");
  if (!(tolerance >= 0.0) || !std::isfinite(tolerance))
    e.push_back("cg.tolerance = " + std::to_string(tolerance) + "; must be finite and >= 0");
  if (!(tikhonov >= 0.0) || !std::isfinite(tikhonov))
    e.push_back("cg.tikhonov = " + std::to_string(tikhonov) + "; must be finite and >= 0");
  return e;
}

SolverSummary solve_cg(const CgOptions& options, const LinearOperator& a, const VecC& y, VecC& x,
                       ProgressSink* progress, const VecC* reference) {
  throw_if_invalid(parse_field_messages(options.validate()));
  internal::prepare_solve("cg", a, y, x);
  if (reference && reference->size() != a.domain_size())
    throw InputError("", "cg.reference",
                     "has " + std::to_string(reference->size()) + " values, expected " + a.domain_shape().to_string());
  SolverSummary summary;
  summary.solver = "cg";
  summary.values["tikhonov"] = options.tikhonov;
  internal::Stopwatch total, lap;
  const float mu = static_cast<float>(options.tikhonov);
  internal::reserve_records(summary, options.max_iterations);
  VecC b;
  a.adjoint(y, b);
  if (reference && options.tikhonov > 0.0) b += mu * *reference;
  auto h = [&](const VecC& in, VecC& out) {
    a.normal(in, out);
    if (mu > 0.f) out += mu * in;
  };
  VecC previous = x, r;
  bool non_finite = false;
  auto record = [&](int k, const VecC& xk, double rel_res) {
    IterationRecord rec;
    rec.iteration = k;
    rec.relative_change = internal::relative_change(xk, previous);
    previous = xk;
    rec.objective = rec.data_residual = std::numeric_limits<double>::quiet_NaN();
    rec.gap = std::numeric_limits<double>::quiet_NaN();
    if (options.record_objective) {
      internal::data_residual(a, xk, y, r);
      const double r2 = norm_squared(r);
      rec.data_residual = std::sqrt(r2);
      double reg = 0.0;
      if (options.tikhonov > 0.0) reg = reference ? internal::squared_distance(xk, *reference) : norm_squared(xk);
      rec.objective = 0.5 * r2 + 0.5 * options.tikhonov * reg;
      non_finite = !std::isfinite(rec.objective);
    } else {
      non_finite = !std::isfinite(rel_res);
    }
    rec.seconds = lap.lap();
    summary.iterations.push_back(rec);
    internal::report_progress(progress, k, options.max_iterations, rec);
    return !non_finite;
  };
  const CgResult res = conjugate_gradient(h, b, x, options.max_iterations, options.tolerance, record);
  summary.values["relative_residual"] = res.relative_residual;
  char msg[128];
  Termination t = Termination::kMaxIterations;
  if (non_finite || !std::isfinite(res.relative_residual)) {
    t = Termination::kNonFinite;
    std::snprintf(msg, sizeof msg, "non-finite value at iteration %d", res.iterations);
  } else if (res.converged) {
    t = Termination::kConverged;
    std::snprintf(msg, sizeof msg, "normal-equation residual %.2e <= %.2e", res.relative_residual, options.tolerance);
  } else if (res.iterations < options.max_iterations) {
    t = Termination::kConverged;
    std::snprintf(msg, sizeof msg, "search direction lost positive curvature at residual %.2e", res.relative_residual);
  } else {
    std::snprintf(msg, sizeof msg, "normal-equation residual %.2e after %d iterations", res.relative_residual,
                  res.iterations);
  }
  internal::finish_summary(summary, t, msg, total.lap(), progress);
  return summary;
}

}  // namespace recofold
