// SPDX-License-Identifier: Apache-2.0
// ADMM with CG x-updates, analysis-prior split and optional box split, residual balancing.
#include "recofold/recon/admm.h"

#include <cmath>
#include <cstdio>
#include <functional>
#include <limits>

#include "recofold/core/error.h"
#include "recofold/core/field_error.h"
#include "recofold/recon/cg.h"
#include "solver_support.h"

namespace recofold {

std::vector<std::string> AdmmOptions::validate() const {
  std::vector<std::string> e;
  if (max_iterations < 1) e.push_back("admm.max_iterations = " + std::to_string(max_iterations) + "; must be >= 1");
  if (!std::isfinite(rho)) e.push_back("admm.rho = " + std::to_string(rho) + "; must be finite");
  if (cg_iterations < 1) e.push_back("admm.cg_iterations = " + std::to_string(cg_iterations) + "; must be >= 1");
  if (!(cg_tolerance >= 0.0) || !std::isfinite(cg_tolerance))
    e.push_back("admm.cg_tolerance = " + std::to_string(cg_tolerance) + "; must be finite and >= 0");
  if (!(relative_tolerance >= 0.0) || !std::isfinite(relative_tolerance))
    e.push_back("admm.relative_tolerance = " + std::to_string(relative_tolerance) + "; must be finite and >= 0");
  return e;
}

SolverSummary solve_admm(const AdmmOptions& options, const LinearOperator& a, const Prior& prior, const VecC& y,
                         VecC& x, ProgressSink* progress) {
  throw_if_invalid(parse_field_messages(options.validate()));
  internal::prepare_solve("admm", a, y, x);
  const internal::PriorParts parts = internal::split_prior(prior);
  if (!parts.supported || (!parts.analysis && !parts.box))
    throw InputError("", "admm.prior",
                     "'" + prior.name() + "' has no analysis form R(x) = g(Kx); use tv, tv-aniso, wavelet or l2");
  const std::shared_ptr<const LinearOperator> k_op = parts.analysis ? parts.analysis->analysis_operator() : nullptr;
  const Box* box = parts.box;
  const double lambda = prior.weight();
  double rho = options.rho > 0.0 ? options.rho : (lambda > 0.0 ? 10.0 * lambda : 1e-2);
  SolverSummary summary;
  summary.solver = "admm";
  summary.values["rho_initial"] = rho;
  internal::Stopwatch total, lap;

  VecC aty;
  a.adjoint(y, aty);
  // Every vector below is sized in the first iteration and reused: no
  // allocation per iteration (tests/unit/recon_allocation_test.cc).
  VecC z, u, w, u2, kx, tmp, tmp2, rhs, r, x_prev, diff, diff_x, z_old, w_old, kin, khk;  // diff: K range, diff_x: image
  CgWorkspace cg_ws;
  internal::reserve_records(summary, options.max_iterations);
  float fr = static_cast<float>(rho);
  // x-update operator (A^H A + rho K^H K + rho [box] I), built once (it reads fr).
  const std::function<void(const VecC&, VecC&)> h = [&](const VecC& in, VecC& out) {
    a.normal(in, out);
    if (k_op) {
      k_op->apply(in, kin);
      k_op->adjoint(kin, khk);
      out += fr * khk;
    }
    if (box) out += fr * in;
  };
  if (k_op) {
    k_op->apply(x, z);
    u.setZero(z.size());
  }
  if (box) {
    box->project(x, w);
    u2.setZero(x.size());
  }
  const double nan = std::numeric_limits<double>::quiet_NaN();
  Termination term = Termination::kMaxIterations;
  std::string message = "reached max_iterations";
  for (int k = 1; k <= options.max_iterations; ++k) {
    fr = static_cast<float>(rho);
    // x-update: (A^H A + rho K^H K + rho [box] I) x = A^H y + rho K^H (z - u) + rho (w - u2).
    rhs = aty;
    if (k_op) {
      diff = z - u;
      k_op->adjoint(diff, tmp);
      rhs += fr * tmp;
    }
    if (box) rhs += fr * (w - u2);
    x_prev = x;
    conjugate_gradient(h, rhs, x, options.cg_iterations, options.cg_tolerance, nullptr, &cg_ws);
    // z- and w-updates, dual updates, residuals.
    double primal2 = 0.0, dual2 = 0.0;
    if (k_op) {
      k_op->apply(x, kx);
      z_old = z;
      diff = kx + u;
      parts.analysis->analysis_prox(diff, 1.0 / rho, z);
      u += kx - z;
      primal2 += internal::squared_distance(kx, z);
      diff = z - z_old;
      k_op->adjoint(diff, tmp2);
      dual2 += rho * rho * norm_squared(tmp2);
    }
    if (box) {
      w_old = w;
      diff_x = x + u2;
      box->project(diff_x, w);
      u2 += x - w;
      primal2 += internal::squared_distance(x, w);
      dual2 += rho * rho * internal::squared_distance(w, w_old);
    }
    IterationRecord rec;
    rec.iteration = k;
    rec.relative_change = internal::relative_change(x, x_prev);
    rec.objective = rec.data_residual = rec.gap = nan;
    if (options.record_objective) {
      internal::data_residual(a, x, y, r);
      const double r2 = norm_squared(r);
      rec.data_residual = std::sqrt(r2);
      rec.objective = 0.5 * r2 + (parts.analysis ? parts.analysis->value(x) : 0.0);
    }
    rec.seconds = lap.lap();
    summary.iterations.push_back(rec);
    internal::report_progress(progress, k, options.max_iterations, rec);
    if (!std::isfinite(rec.relative_change) || !std::isfinite(primal2) ||
        (options.record_objective && !std::isfinite(rec.objective))) {
      term = Termination::kNonFinite;
      message = "non-finite value at iteration " + std::to_string(k);
      break;
    }
    if (k > 1 && rec.relative_change <= options.relative_tolerance) {
      term = Termination::kConverged;
      char buf[96];
      std::snprintf(buf, sizeof buf, "relative change %.2e <= %.2e", rec.relative_change, options.relative_tolerance);
      message = buf;
      break;
    }
    if (options.adaptive_rho) {
      // Residual balancing; the scaled duals u = y/rho change with rho.
      if (primal2 > 100.0 * dual2) {
        rho *= 2.0;
        if (k_op) u *= 0.5f;
        if (box) u2 *= 0.5f;
      } else if (dual2 > 100.0 * primal2) {
        rho *= 0.5;
        if (k_op) u *= 2.0f;
        if (box) u2 *= 2.0f;
      }
    }
  }
  if (box) box->project(x, x);
  summary.values["rho"] = rho;
  internal::finish_summary(summary, term, message, total.lap(), progress);
  return summary;
}

}  // namespace recofold
