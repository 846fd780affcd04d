// SPDX-License-Identifier: Apache-2.0
// The unrolled scheme: K iterations of (data-consistency step, prior step) with per-iteration parameters.
#pragma once

#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/progress.h"
#include "recofold/ops/linear_operator.h"
#include "recofold/priors/prior.h"
#include "recofold/recon/solver_summary.h"

namespace recofold {

// How an iteration enforces consistency with the measurement y.
enum class DcMode {
  // z = v - alpha_k A^H (A v - y): a gradient step on 1/2||Av - y||^2 (ISTA/FISTA; learned alpha).
  kGradient,
  // z = argmin_x 1/2||A x - y||^2 + mu_k/2 ||x - v||^2, i.e. (A^H A + mu_k I) z = A^H y + mu_k v,
  // solved by CG warm-started at v (half-quadratic splitting; MoDL, Aggarwal et al. 2019).
  kCgSolve,
  // Hard replacement of the measured samples. Generic form z = v + A^H (y - A v),
  // exact replacement when A A^H is an orthogonal projection (single-coil
  // Cartesian masked orthonormal FFT, noiseless data); other operators need a
  // UnrolledOptions::projection callback.
  kReplace,
};

std::string_view to_string(DcMode mode);  // "gradient", "cg", "replace"
std::optional<DcMode> parse_dc_mode(std::string_view text);

// Parameters of one iteration k; hand-set, from a schedule helper below, or
// learned (issue 7 trains exactly these numbers per iteration).
struct IterationParameters {
  double step = 1.0;        // alpha_k > 0, kGradient step size (1/L for ISTA)
  double mu = 1.0;          // mu_k > 0, kCgSolve coupling weight
  double prior_step = 1.0;  // tau_k >= 0, passed to the prior step (ProxPriorStep: prox of tau_k * lambda R)
  double momentum = 0.0;    // beta_k, extrapolation v = x_k + beta_k (x_k - x_{k-1}); 0 = none
};

// The prior slot of the unrolled scheme: maps the data-consistent image to the
// next iterate. Classical priors plug in through ProxPriorStep; a learned
// denoiser (CNN, learned thresholds) implements apply() using `iteration` to
// pick per-iteration weights and `params` for trained scalars. Must be safe to
// call concurrently (const), like operators.
class PriorStep {
 public:
  virtual ~PriorStep() = default;
  // out = prior update of `in` at iteration `iteration` (0-based). `out` may alias `in`.
  virtual void apply(int iteration, const IterationParameters& params, const VecC& in, VecC& out) const = 0;
  virtual std::string name() const = 0;
};

// out = prior.prox(in, params.prior_step).
class ProxPriorStep final : public PriorStep {
 public:
  explicit ProxPriorStep(std::shared_ptr<const Prior> prior);
  void apply(int iteration, const IterationParameters& params, const VecC& in, VecC& out) const override;
  std::string name() const override;
  const Prior& prior() const { return *prior_; }

 private:
  std::shared_ptr<const Prior> prior_;
};

// Hard-replacement projection for kReplace: out = the point closest to x that
// reproduces the measurement y (e.g. for single-coil Cartesian:
// F^H((1 - M) F x + M y)).
using DataProjection = std::function<void(const VecC& x, const VecC& y, VecC& out)>;

struct UnrolledOptions {
  int iterations = 10;                 // K >= 1: the number of unrolled iterations
  DcMode dc_mode = DcMode::kGradient;  // see DcMode
  // Order within an iteration: false (default) x_{k+1} = P(DC(v_k)) (ISTA
  // order, output is a prior step); true x_{k+1} = DC(P(v_k)) (MoDL order,
  // output is data-consistent).
  bool prior_first = false;
  int cg_iterations = 10;              // kCgSolve inner CG steps per iteration, >= 1
  double cg_tolerance = 1e-6;          // kCgSolve relative residual tolerance, >= 0
  // Stop early when ||x_k - x_{k-1}|| / ||x_k|| <= relative_tolerance; 0 (default)
  // runs all K iterations, as a trained network does.
  double relative_tolerance = 0.0;
  // Record the data residual ||A x_k - y|| (and the objective when run() gets
  // an objective prior) per iteration: one extra A apply per iteration.
  bool record_objective = true;
  // kReplace only: the projection; empty = the generic form (checked at run()).
  DataProjection projection;

  std::vector<std::string> validate() const;  // "unrolled.iterations = 0; must be >= 1", ...
};

// Runs, for k = 0 .. K-1 (x_{-1} = x_0 = the start image):
//   v_k     = x_k + beta_k (x_k - x_{k-1})
//   x_{k+1} = PriorStep(k, DC_k(v_k))        (or DC_k(PriorStep(k, v_k)) when prior_first)
// With kGradient, alpha_k = tau_k = 1/L, beta_k = 0 and a ProxPriorStep this is
// ISTA step for step (bit for bit the same arithmetic as solve_ista); with the
// FISTA momentum schedule and no restart it is FISTA. ADMM shares the CG
// data-consistency piece (solve_regularised_normal) and the priors' prox maps.
class UnrolledScheme {
 public:
  // `parameters`: one entry per iteration, or a single entry used for all.
  // Throws InputError when options or parameters are invalid.
  UnrolledScheme(UnrolledOptions options, std::vector<IterationParameters> parameters,
                 std::shared_ptr<const PriorStep> prior_step);

  // `x`: start image on input (zeros when empty; A^H y is a common start), result on output.
  // `objective_prior`: when given, records 1/2||Ax - y||^2 + prior.value(x) per iteration.
  // Summary values: "iterations". Throws InputError for sizes that do not fit
  // A, or kReplace with an operator whose A A^H is not a projection.
  SolverSummary run(const LinearOperator& a, const VecC& y, VecC& x, ProgressSink* progress = nullptr,
                    const Prior* objective_prior = nullptr) const;

  const UnrolledOptions& options() const { return options_; }
  const IterationParameters& parameters(int iteration) const;
  const PriorStep& prior_step() const { return *prior_step_; }

 private:
  UnrolledOptions options_;
  std::vector<IterationParameters> parameters_;
  std::shared_ptr<const PriorStep> prior_step_;
};

// Schedules.
// ISTA: alpha_k = tau_k = step, beta_k = 0.
std::vector<IterationParameters> ista_schedule(int iterations, double step);
// FISTA (Beck & Teboulle 2009): alpha_k = tau_k = step, beta_0 = 0,
// beta_k = (t_k - 1)/t_{k+1}, t_1 = 1, t_{k+1} = (1 + sqrt(1 + 4 t_k^2))/2.
std::vector<IterationParameters> fista_schedule(int iterations, double step);
// Half-quadratic splitting with kCgSolve: mu_k = mu, tau_k = 1/mu (so the prior
// step is prox of (lambda/mu) R), beta_k = 0.
std::vector<IterationParameters> half_quadratic_schedule(int iterations, double mu);

// One gradient data-consistency step: z = v - step * A^H (A v - y). The piece
// shared by ISTA, FISTA and kGradient.
void gradient_dc_step(const LinearOperator& a, const VecC& y, const VecC& v, double step, VecC& z);
// The same with caller-kept work vectors (the residual A v - y and A^H of it),
// so repeated steps do not allocate.
struct DcWorkspace {
  VecC residual, gradient;
};
void gradient_dc_step(const LinearOperator& a, const VecC& y, const VecC& v, double step, VecC& z, DcWorkspace& ws);

// v = x + beta (x - x_prev), the extrapolation shared by FISTA and the scheme.
void extrapolate(const VecC& x, const VecC& x_prev, double beta, VecC& v);

}  // namespace recofold
