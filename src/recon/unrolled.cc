// SPDX-License-Identifier: Apache-2.0
// The unrolled scheme: data-consistency and prior steps with per-iteration parameters; schedules.
#include "recofold/recon/unrolled.h"

#include <cmath>
#include <cstdio>
#include <limits>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/core/field_error.h"
#include "recofold/recon/cg.h"
#include "solver_support.h"

namespace recofold {

std::string_view to_string(DcMode mode) {
  switch (mode) {
    case DcMode::kGradient: return "gradient";
    case DcMode::kCgSolve: return "cg";
    case DcMode::kReplace: return "replace";
  }
  return "gradient";
}

std::optional<DcMode> parse_dc_mode(std::string_view text) {
  for (DcMode m : {DcMode::kGradient, DcMode::kCgSolve, DcMode::kReplace})
    if (text == to_string(m)) return m;
  return std::nullopt;
}

ProxPriorStep::ProxPriorStep(std::shared_ptr<const Prior> prior) : prior_(std::move(prior)) {
  RECOFOLD_CHECK(prior_ != nullptr) << "ProxPriorStep needs a prior";
}

void ProxPriorStep::apply(int iteration, const IterationParameters& params, const VecC& in, VecC& out) const {
  prior_->prox_at(in, params.prior_step, static_cast<uint64_t>(iteration) + 1, out);
}

std::string ProxPriorStep::name() const { return "prox of " + prior_->name(); }

void gradient_dc_step(const LinearOperator& a, const VecC& y, const VecC& v, double step, VecC& z) {
  DcWorkspace ws;
  gradient_dc_step(a, y, v, step, z, ws);
}

void gradient_dc_step(const LinearOperator& a, const VecC& y, const VecC& v, double step, VecC& z, DcWorkspace& ws) {
  internal::data_residual(a, v, y, ws.residual);
  internal::gradient_step_from_residual(a, ws.residual, v, step, z, ws.gradient);
}

void extrapolate(const VecC& x, const VecC& x_prev, double beta, VecC& v) {
  v = x + static_cast<float>(beta) * (x - x_prev);
}

std::vector<std::string> UnrolledOptions::validate() const {
  std::vector<std::string> e;
  if (iterations < 1) e.push_back("unrolled.iterations = " + std::to_string(iterations) + "; must be >= 1");
  if (cg_iterations < 1)
    e.push_back("unrolled.cg_iterations = " + std::to_string(cg_iterations) + "; must be >= 1");
  if (!(cg_tolerance >= 0.0) || !std::isfinite(cg_tolerance))
    e.push_back("unrolled.cg_tolerance = " + std::to_string(cg_tolerance) + "; must be finite and >= 0");
  if (!(relative_tolerance >= 0.0) || !std::isfinite(relative_tolerance))
    e.push_back("unrolled.relative_tolerance = " + std::to_string(relative_tolerance) + "; must be finite and >= 0");
  return e;
}

UnrolledScheme::UnrolledScheme(UnrolledOptions options, std::vector<IterationParameters> parameters,
                               std::shared_ptr<const PriorStep> prior_step)
    : options_(std::move(options)), parameters_(std::move(parameters)), prior_step_(std::move(prior_step)) {
  std::vector<std::string> e = options_.validate();
  if (!prior_step_) e.push_back("unrolled.prior_step is missing");
  if (parameters_.size() != 1 && parameters_.size() != static_cast<size_t>(std::max(options_.iterations, 0)))
    e.push_back("unrolled.parameters has " + std::to_string(parameters_.size()) + " entries; need 1 or " +
                std::to_string(options_.iterations) + " (one per iteration)");
  for (size_t k = 0; k < parameters_.size(); ++k) {
    const IterationParameters& p = parameters_[k];
    const std::string at = "unrolled.parameters[" + std::to_string(k) + "]";
    if (options_.dc_mode == DcMode::kGradient && !(p.step > 0.0 && std::isfinite(p.step)))
      e.push_back(at + ".step = " + std::to_string(p.step) + "; must be finite and > 0");
    if (options_.dc_mode == DcMode::kCgSolve && !(p.mu > 0.0 && std::isfinite(p.mu)))
      e.push_back(at + ".mu = " + std::to_string(p.mu) + "; must be finite and > 0");
    if (!(p.prior_step >= 0.0) || !std::isfinite(p.prior_step))
      e.push_back(at + ".prior_step = " + std::to_string(p.prior_step) + "; must be finite and >= 0");
    if (!std::isfinite(p.momentum)) e.push_back(at + ".momentum = " + std::to_string(p.momentum) + "; must be finite");
  }
  throw_if_invalid(parse_field_messages(e));
}

const IterationParameters& UnrolledScheme::parameters(int iteration) const {
  return parameters_.size() == 1 ? parameters_.front() : parameters_.at(static_cast<size_t>(iteration));
}

namespace {

// Checks A (A^H A w) = A w for a random w, i.e. that A A^H acts as a projection
// on A's range, which makes v + A^H (y - A v) the exact replacement.
void require_projection_property(const LinearOperator& a) {
  Rng rng(12345);
  VecC w(a.domain_size());
  for (Index i = 0; i < w.size(); ++i) w[i] = cfloat(float(rng.normal()), float(rng.normal()));
  VecC aw, ahaw, aahaw;
  a.apply(w, aw);
  a.adjoint(aw, ahaw);
  a.apply(ahaw, aahaw);
  const double err = std::sqrt(norm_squared(aahaw - aw) / std::max(norm_squared(aw), 1e-30));
  if (!(err < 1e-3)) {
    char buf[64];
    std::snprintf(buf, sizeof buf, "%.2e", err);
    throw InputError("", "unrolled.dc_mode",
                     "replace needs A A^H to be an orthogonal projection (single-coil Cartesian masked "
                     "orthonormal FFT) or an explicit projection; operator '" +
                         a.name() + "' misses it by " + buf);
  }
}

}  // namespace

SolverSummary UnrolledScheme::run(const LinearOperator& a, const VecC& y, VecC& x, ProgressSink* progress,
                                  const Prior* objective_prior) const {
  internal::prepare_solve("unrolled", a, y, x);
  if (options_.dc_mode == DcMode::kReplace && !options_.projection) require_projection_property(a);
  SolverSummary summary;
  summary.solver = "unrolled";
  internal::Stopwatch total, lap;
  VecC aty;
  if (options_.dc_mode == DcMode::kCgSolve) a.adjoint(y, aty);
  // Work vectors sized in the first iteration and reused (no allocation per iteration).
  VecC x_prev = x, v, z, x_new, r;
  DcWorkspace dc_ws;
  CgWorkspace cg_ws;
  internal::reserve_records(summary, options_.iterations);
  const double nan = std::numeric_limits<double>::quiet_NaN();

  auto dc = [&](const IterationParameters& p, const VecC& in, VecC& out) {
    switch (options_.dc_mode) {
      case DcMode::kGradient: gradient_dc_step(a, y, in, p.step, out, dc_ws); break;
      case DcMode::kCgSolve:
        out = in;
        solve_regularised_normal(a, aty, in, p.mu, out, options_.cg_iterations, options_.cg_tolerance, &cg_ws);
        break;
      case DcMode::kReplace:
        if (options_.projection)
          options_.projection(in, y, out);
        else
          gradient_dc_step(a, y, in, 1.0, out, dc_ws);
        break;
    }
  };

  Termination term = Termination::kMaxIterations;
  std::string message = "ran all " + std::to_string(options_.iterations) + " iterations";
  for (int k = 0; k < options_.iterations; ++k) {
    const IterationParameters& p = parameters(k);
    if (p.momentum != 0.0)
      extrapolate(x, x_prev, p.momentum, v);
    else
      v = x;
    if (!options_.prior_first) {
      dc(p, v, z);
      prior_step_->apply(k, p, z, x_new);
    } else {
      prior_step_->apply(k, p, v, z);
      dc(p, z, x_new);
    }
    IterationRecord rec;
    rec.iteration = k + 1;
    rec.relative_change = internal::relative_change(x_new, x);
    rec.objective = rec.data_residual = rec.gap = nan;
    if (options_.record_objective) {
      internal::data_residual(a, x_new, y, r);
      const double r2 = norm_squared(r);
      rec.data_residual = std::sqrt(r2);
      if (objective_prior) rec.objective = 0.5 * r2 + objective_prior->value(x_new);
    }
    x_prev.swap(x);
    x.swap(x_new);
    rec.seconds = lap.lap();
    summary.iterations.push_back(rec);
    internal::report_progress(progress, k + 1, options_.iterations, rec);
    if (!std::isfinite(rec.relative_change) || (options_.record_objective && !std::isfinite(rec.data_residual))) {
      term = Termination::kNonFinite;
      message = "non-finite value at iteration " + std::to_string(k + 1);
      break;
    }
    if (options_.relative_tolerance > 0.0 && rec.relative_change <= options_.relative_tolerance) {
      term = Termination::kConverged;
      message = "relative change below " + std::to_string(options_.relative_tolerance);
      break;
    }
  }
  summary.values["iterations"] = static_cast<double>(summary.iterations.size());
  internal::finish_summary(summary, term, message, total.lap(), progress);
  return summary;
}

std::vector<IterationParameters> ista_schedule(int iterations, double step) {
  IterationParameters p;
  p.step = step;
  p.prior_step = step;
  p.momentum = 0.0;
  return std::vector<IterationParameters>(static_cast<size_t>(std::max(iterations, 0)), p);
}

std::vector<IterationParameters> fista_schedule(int iterations, double step) {
  std::vector<IterationParameters> ps = ista_schedule(iterations, step);
  double t = 1.0;  // t_1
  for (size_t k = 1; k < ps.size(); ++k) {
    const double t_next = 0.5 * (1.0 + std::sqrt(1.0 + 4.0 * t * t));
    ps[k].momentum = (t - 1.0) / t_next;  // beta_k = (t_k - 1)/t_{k+1}
    t = t_next;
  }
  return ps;
}

std::vector<IterationParameters> half_quadratic_schedule(int iterations, double mu) {
  IterationParameters p;
  p.mu = mu;
  p.prior_step = 1.0 / mu;
  return std::vector<IterationParameters>(static_cast<size_t>(std::max(iterations, 0)), p);
}

}  // namespace recofold
