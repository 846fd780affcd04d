// SPDX-License-Identifier: Apache-2.0
// Chambolle-Pock primal-dual iteration with block dual steps and the (partial) primal-dual gap.
#include "recofold/recon/pdhg.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>

#include "recofold/core/error.h"
#include "recofold/core/field_error.h"
#include "solver_support.h"

namespace recofold {

std::vector<std::string> PdhgOptions::validate() const {
  std::vector<std::string> e;
  if (max_iterations < 1) e.push_back("pdhg.max_iterations = " + std::to_string(max_iterations) + "; must be >= 1");
  if (!std::isfinite(tau) || !std::isfinite(sigma) || ((tau > 0.0) != (sigma > 0.0)))
    e.push_back("pdhg.tau = " + std::to_string(tau) + ", pdhg.sigma = " + std::to_string(sigma) +
                "; set both > 0 or neither");
  if (!(balance > 0.0) || !std::isfinite(balance))
    e.push_back("pdhg.balance = " + std::to_string(balance) + "; must be finite and > 0");
  if (!(diagonal_balance > 0.0) || !std::isfinite(diagonal_balance))
    e.push_back("pdhg.diagonal_balance = " + std::to_string(diagonal_balance) + "; must be finite and > 0");
  if (power_iterations < 1)
    e.push_back("pdhg.power_iterations = " + std::to_string(power_iterations) + "; must be >= 1");
  if (!(relative_tolerance >= 0.0) || !std::isfinite(relative_tolerance))
    e.push_back("pdhg.relative_tolerance = " + std::to_string(relative_tolerance) + "; must be finite and >= 0");
  if (!(gap_tolerance >= 0.0) || !std::isfinite(gap_tolerance))
    e.push_back("pdhg.gap_tolerance = " + std::to_string(gap_tolerance) + "; must be finite and >= 0");
  return e;
}

SolverSummary solve_pdhg(const PdhgOptions& options, const LinearOperator& a, const Prior& prior, const VecC& y,
                         VecC& x, ProgressSink* progress) {
  throw_if_invalid(parse_field_messages(options.validate()));
  internal::prepare_solve("pdhg", a, y, x);
  const internal::PriorParts parts = internal::split_prior(prior);
  if (!parts.supported)
    throw InputError("", "pdhg.prior",
                     "'" + prior.name() + "' has no analysis form R(x) = g(Kx); use tv, tv-aniso, wavelet, l2 or none");
  const std::shared_ptr<const LinearOperator> k_op = parts.analysis ? parts.analysis->analysis_operator() : nullptr;
  const Box* box = parts.box;
  SolverSummary summary;
  summary.solver = "pdhg";
  internal::Stopwatch total, lap;

  // Diagonal steps when asked for (or automatic) and both operators know
  // the sums of their absolute entries.
  VecF sig_a_diag, tau_diag, sig_a_inv1, k_rows, k_cols;
  bool diagonal = false;
  if (options.tau <= 0.0 && options.preconditioning != PdhgPreconditioning::kScalar) {
    diagonal = a.absolute_sums(sig_a_diag, tau_diag) && (!k_op || k_op->absolute_sums(k_rows, k_cols));
    if (!diagonal && options.preconditioning == PdhgPreconditioning::kDiagonal)
      throw InputError("", "pdhg.preconditioning",
                       "diagonal steps need the sums of absolute entries, which '" + a.name() + "'" +
                           (k_op ? " or '" + k_op->name() + "'" : std::string()) + " cannot report");
  }
  double na = 0.0, nk = 0.0, tau = 0.0, sa = 0.0, sk = 0.0, tau_min = 0.0, sa_min = 0.0;
  if (diagonal) {
    // Block weights: each block scaled by b over a bound of its norm.
    const double b = options.diagonal_balance;
    const double a_rows = sig_a_diag.size() ? double(sig_a_diag.maxCoeff()) : 0.0;
    const double a_cols = tau_diag.size() ? double(tau_diag.maxCoeff()) : 0.0;
    const double bound_a = std::sqrt(a_rows * a_cols);  // Schur's bound on ||A||
    const double k_max_row = k_op && k_rows.size() ? double(k_rows.maxCoeff()) : 0.0;
    const double k_max_col = k_op && k_cols.size() ? double(k_cols.maxCoeff()) : 0.0;
    const double bound_k = std::sqrt(k_max_row * k_max_col);
    const float wa = static_cast<float>(bound_a > 0.0 ? b / bound_a : b);
    const float wk = static_cast<float>(bound_k > 0.0 ? b / bound_k : b);
    tau_diag *= wa;
    if (k_op) tau_diag += wk * k_cols;
    for (Index j = 0; j < tau_diag.size(); ++j) tau_diag[j] = tau_diag[j] > 0.f ? 0.99f / tau_diag[j] : 0.99f / float(b);
    for (Index i = 0; i < sig_a_diag.size(); ++i) sig_a_diag[i] = sig_a_diag[i] > 0.f ? wa / sig_a_diag[i] : wa;
    sig_a_inv1 = (1.f + sig_a_diag.array()).inverse().matrix();
    sk = k_op ? (k_max_row > 0.0 ? wk / k_max_row : double(wk)) : 0.0;
    tau = tau_diag.size() ? tau_diag.maxCoeff() : 0.0;
    tau_min = tau_diag.size() ? tau_diag.minCoeff() : 0.0;
    sa = sig_a_diag.size() ? sig_a_diag.maxCoeff() : 0.0;
    sa_min = sig_a_diag.size() ? sig_a_diag.minCoeff() : 0.0;
  } else {
    na = std::max(estimate_norm_squared(a, options.power_iterations, 1), 1e-30);
    nk = k_op ? std::max(estimate_norm_squared(*k_op, options.power_iterations, 2), 1e-30) : 0.0;
    if (options.tau > 0.0) {
      tau = options.tau;
      sa = sk = options.sigma;
      // The power iteration under-estimates; keep a small margin.
      if (!(tau * options.sigma * 1.01 * (na + nk) < 1.0))
        throw InputError("", "pdhg.tau",
                         "tau * sigma * ||K||^2 = " + std::to_string(tau * options.sigma * (na + nk)) +
                             " (with a 1 % margin for the norm estimate) must be < 1");
    } else {
      const double b = options.balance;
      sa = b / (1.01 * na);
      sk = k_op ? b / (1.01 * nk) : 0.0;
      tau = 0.99 / ((k_op ? 2.0 : 1.0) * b);
    }
    tau_min = tau;
    sa_min = sa;
  }
  summary.values["diagonal"] = diagonal ? 1.0 : 0.0;
  summary.values["tau"] = tau;
  summary.values["tau_min"] = tau_min;
  summary.values["sigma_a"] = sa;
  summary.values["sigma_a_min"] = sa_min;
  summary.values["sigma_k"] = sk;
  summary.values["norm_a_squared"] = na;
  summary.values["norm_k_squared"] = nk;

  if (box) box->project(x, x);
  // Every vector is sized before or in the first iteration and reused (no
  // allocation per iteration; tests/unit/recon_allocation_test.cc).
  VecC p = VecC::Zero(a.range_size()), q, ax, kx, w, s, tmp, khq, x_new, xbar = x, r, scaled, neg_s;
  internal::reserve_records(summary, options.max_iterations);
  if (k_op) q.setZero(k_op->range_size());
  const Box free_box{-std::numeric_limits<double>::infinity(), std::numeric_limits<double>::infinity(), false};
  const float fsa = static_cast<float>(sa), fsk = static_cast<float>(sk), ftau = static_cast<float>(tau);
  const double nan = std::numeric_limits<double>::quiet_NaN();
  double last_gap = nan;
  Termination term = Termination::kMaxIterations;
  std::string message = "reached max_iterations";
  for (int k = 1; k <= options.max_iterations; ++k) {
    // Dual steps at xbar.
    a.apply(xbar, ax);
    if (diagonal)
      p = ((p.array() + sig_a_diag.array().cast<cfloat>() * (ax - y).array()) * sig_a_inv1.array().cast<cfloat>())
              .matrix();
    else
      p = (p + fsa * (ax - y)) / (1.f + fsa);
    if (k_op) {
      k_op->apply(xbar, kx);
      w = q + fsk * kx;
      scaled = w / fsk;
      parts.analysis->analysis_prox(scaled, 1.0 / sk, tmp);
      q = w - fsk * tmp;
    }
    // Primal step.
    a.adjoint(p, s);
    if (k_op) {
      k_op->adjoint(q, khq);
      s += khq;
    }
    if (diagonal)
      x_new = (x.array() - tau_diag.array().cast<cfloat>() * s.array()).matrix();
    else
      x_new = x - ftau * s;
    if (box) box->project(x_new, x_new);
    xbar = 2.f * x_new - x;
    IterationRecord rec;
    rec.iteration = k;
    rec.relative_change = internal::relative_change(x_new, x);
    x.swap(x_new);
    rec.objective = rec.data_residual = rec.gap = nan;
    if (options.record_gap) {
      internal::data_residual(a, x, y, r);
      const double r2 = norm_squared(r);
      rec.data_residual = std::sqrt(r2);
      double primal = 0.5 * r2;
      double dual = -(0.5 * norm_squared(p) + dot(p, y).real());
      if (k_op) {
        k_op->apply(x, kx);
        primal += parts.analysis->analysis_value(kx);
        dual -= parts.analysis->analysis_conjugate(q);
      }
      const double radius = 2.0 * (x.size() ? double(x.cwiseAbs().maxCoeff()) : 0.0) + 1.0;
      neg_s = -s;
      dual -= (box ? *box : free_box).support(neg_s, radius);
      rec.objective = primal;
      rec.gap = primal - dual;
      last_gap = rec.gap;
    }
    rec.seconds = lap.lap();
    summary.iterations.push_back(rec);
    internal::report_progress(progress, k, options.max_iterations, rec);
    if (!std::isfinite(rec.relative_change) || (options.record_gap && !std::isfinite(rec.objective))) {
      term = Termination::kNonFinite;
      message = "non-finite value at iteration " + std::to_string(k);
      break;
    }
    char buf[96];
    if (options.record_gap && options.gap_tolerance > 0.0 &&
        rec.gap <= options.gap_tolerance * std::max(1.0, std::abs(rec.objective))) {
      term = Termination::kConverged;
      std::snprintf(buf, sizeof buf, "gap %.2e <= %.2e relative", rec.gap, options.gap_tolerance);
      message = buf;
      break;
    }
    if (k > 1 && rec.relative_change <= options.relative_tolerance) {
      term = Termination::kConverged;
      std::snprintf(buf, sizeof buf, "relative change %.2e <= %.2e", rec.relative_change, options.relative_tolerance);
      message = buf;
      break;
    }
  }
  summary.values["gap"] = last_gap;
  internal::finish_summary(summary, term, message, total.lap(), progress);
  return summary;
}

}  // namespace recofold
