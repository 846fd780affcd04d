// SPDX-License-Identifier: Apache-2.0
// The held-out-views lambda rule for CT (lambda_held_out.h).
#include "recofold/recon/lambda_held_out.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <memory>
#include <utility>
#include <vector>

#include "recofold/core/error.h"
#include "recofold/ops/joseph_projector.h"
#include "recofold/recon/lambda_discrepancy.h"

namespace recofold {

namespace {

constexpr int kHoldOutEvery = 6;
// The walk towards the smallest misfit goes on while a step lowers it by more
// than this fraction of its standard error (a smaller gain cannot move the
// one-SE threshold noticeably; it also ends walks over the flat stretch that
// warm-started, tolerance-limited solves leave at small lambda).
constexpr double kWalkGainInSe = 0.1;

// The measurement restricted to the given views (sinogram rows and angles).
Measurement view_subset(const Measurement& m, const std::vector<Index>& views) {
  Measurement s;
  s.modality = m.modality;
  s.ny = m.ny;
  s.nx = m.nx;
  s.pixel_spacing_mm[0] = m.pixel_spacing_mm[0];
  s.pixel_spacing_mm[1] = m.pixel_spacing_mm[1];
  CtData ct = *m.ct;
  const Index det = m.ct->sinogram.shape[1];
  ct.sinogram = NdArray<float>(Shape{static_cast<Index>(views.size()), det});
  ct.angles_rad.clear();
  for (size_t k = 0; k < views.size(); ++k) {
    ct.angles_rad.push_back(m.ct->angles_rad[static_cast<size_t>(views[k])]);
    for (Index j = 0; j < det; ++j)
      ct.sinogram.data[k * static_cast<size_t>(det) + static_cast<size_t>(j)] =
          m.ct->sinogram.data[static_cast<size_t>(views[k] * det + j)];
  }
  s.ct = std::move(ct);
  return s;
}

// ||A||_F^2 = trace(A^H A) from two deterministic Rademacher probes (E||A z||^2 = ||A||_F^2).
double frobenius_squared(const LinearOperator& a) {
  const Index n = a.domain_size();
  VecC z(n), az;
  double sum = 0.0;
  uint64_t state = 0x9e3779b97f4a7c15ULL;
  for (int probe = 0; probe < 2; ++probe) {
    for (Index i = 0; i < n; ++i) {
      state = state * 6364136223846793005ULL + 1442695040888963407ULL;
      z[i] = cfloat((state >> 63) ? 1.0f : -1.0f, 0.0f);
    }
    a.apply(z, az);
    sum += static_cast<double>(az.squaredNorm());
  }
  return sum / 2.0;
}

double sum_of(const std::vector<double>& v) {
  double s = 0.0;
  for (double d : v) s += d;
  return s;
}

}  // namespace

double misfit_standard_error(const std::vector<double>& q) {
  const size_t n = q.size();
  if (n < 2) return 0.0;
  const double mean = sum_of(q) / static_cast<double>(n);
  double ss = 0.0;
  for (double d : q) ss += (d - mean) * (d - mean);
  return std::sqrt(static_cast<double>(n) * ss / static_cast<double>(n - 1));
}

OneStandardErrorChoice one_standard_error_choice(const std::vector<double>& lambdas,
                                                 const std::vector<std::vector<double>>& q) {
  RECOFOLD_CHECK(!lambdas.empty() && lambdas.size() == q.size()) << lambdas.size() << " lambdas, " << q.size();
  std::vector<double> e(q.size());
  for (size_t k = 0; k < q.size(); ++k) {
    RECOFOLD_CHECK(!q[k].empty() && q[k].size() == q[0].size()) << "residuals of lambda " << k;
    e[k] = sum_of(q[k]);
  }
  OneStandardErrorChoice c;
  c.smallest = static_cast<int>(std::min_element(e.begin(), e.end()) - e.begin());
  c.standard_error = misfit_standard_error(q[static_cast<size_t>(c.smallest)]);
  c.threshold = e[static_cast<size_t>(c.smallest)] + c.standard_error;
  for (size_t k = 0; k < e.size(); ++k) {
    const bool within = e[k] <= c.threshold;
    if (within && (c.chosen < 0 || lambdas[k] > lambdas[static_cast<size_t>(c.chosen)])) c.chosen = static_cast<int>(k);
  }
  const double lc = lambdas[static_cast<size_t>(c.chosen)];
  for (size_t k = 0; k < e.size(); ++k)
    if (lambdas[k] > lc && (c.beyond < 0 || lambdas[k] < lambdas[static_cast<size_t>(c.beyond)]))
      c.beyond = static_cast<int>(k);
  c.lambda = lc;
  if (c.beyond >= 0) {
    // The crossing E = threshold, E linear in log lambda between the two.
    const double ec = e[static_cast<size_t>(c.chosen)], eb = e[static_cast<size_t>(c.beyond)];
    const double lb = lambdas[static_cast<size_t>(c.beyond)];
    const double t = eb > ec ? std::clamp((c.threshold - ec) / (eb - ec), 0.0, 1.0) : 0.0;
    c.lambda = std::exp(std::log(lc) + t * (std::log(lb) - std::log(lc)));
  }
  return c;
}

HeldOutChoice choose_lambda_held_out_views(const Measurement& m, const Prior& prior, const SolveFactory& make_solve,
                                           int max_steps, const std::string& file, ProgressSink* progress) {
  const Index views = m.ct->sinogram.shape[0];
  if (views < 2 * kHoldOutEvery)
    throw InputError(file, "lambda",
                     "auto on CT holds out every " + std::to_string(kHoldOutEvery) + "th view and needs >= " +
                         std::to_string(2 * kHoldOutEvery) + " views; this file has " + std::to_string(views) +
                         "; give a value");
  std::vector<Index> train, held;
  for (Index v = 0; v < views; ++v) (v % kHoldOutEvery == kHoldOutEvery / 2 ? held : train).push_back(v);
  const Measurement mt = view_subset(m, train), mh = view_subset(m, held);
  const auto at = make_ct_operator(mt, file);
  const auto ah = make_ct_operator(mh, file);
  const VecC yt = ct_sinogram_vector(mt), yh = ct_sinogram_vector(mh);
  const RegularisedSolve solve = make_solve(*at, yt);

  // Start: 10 sigma_e sqrt(trace(A^H A)/n), sigma_e the Poisson noise per ray
  // (1e-3 of the rms line integral for noiseless data); the walk below goes
  // up or down from there.
  const double rays = static_cast<double>(yt.size());
  const double photons = m.ct->photons_per_ray;
  const double sigma_e = photons > 0.0 ? std::sqrt(transmission_noise_energy(yt, photons) / rays)
                                       : 1e-3 * std::sqrt(static_cast<double>(yt.squaredNorm()) / rays);
  double start = 10.0 * sigma_e * std::sqrt(frobenius_squared(*at) / static_cast<double>(at->domain_size()));
  if (!(start > 0.0) || !std::isfinite(start)) start = 1e-3;

  HeldOutChoice c;
  std::vector<VecC> images;
  std::vector<std::vector<double>> squared;  // per held-out ray, per point
  std::vector<double> lambdas;
  std::unique_ptr<Prior> p = prior.clone();
  VecC r;
  auto run_at = [&](double lambda, VecC image) {
    const auto t = std::chrono::steady_clock::now();
    p->set_weight(lambda);
    const SolverSummary s = solve(*p, image);
    LambdaPoint pt;
    pt.lambda = lambda;
    pt.objective = s.iterations.empty() ? std::nan("") : s.iterations.back().objective;
    at->apply(image, r);
    r -= yt;
    pt.residual_squared = static_cast<double>(r.squaredNorm());
    ah->apply(image, r);
    r -= yh;
    std::vector<double> q(static_cast<size_t>(r.size()));
    for (Index i = 0; i < r.size(); ++i) q[static_cast<size_t>(i)] = std::norm(r[i]);
    pt.score = sum_of(q);
    pt.iterations = static_cast<int>(s.iterations.size());
    pt.termination = s.termination;
    pt.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t).count();
    c.curve.points.push_back(pt);
    images.push_back(std::move(image));
    lambdas.push_back(lambda);
    const double se = misfit_standard_error(q);
    squared.push_back(std::move(q));
    if (progress) {
      char buf[96];
      std::snprintf(buf, sizeof buf, "lambda %.3g held-out misfit %.4g", lambda, pt.score);
      progress->update(static_cast<int64_t>(c.curve.points.size()), max_steps, buf);
    }
    return std::make_pair(pt.score, se);
  };
  auto budget_left = [&] { return static_cast<int>(c.curve.points.size()) < max_steps; };
  // Walk a x2 grid with warm starts towards the smallest misfit: down from
  // the start while the misfit falls by more than kWalkGainInSe of its SE;
  // when the first step down does not, up instead.
  const auto first = run_at(start, VecC());
  auto prev = run_at(start * 0.5, images.back());
  double factor = 0.5, lam = start * 0.5;
  size_t from = 1;
  auto gains = [](std::pair<double, double> now, std::pair<double, double> before) {
    return now.first < before.first - kWalkGainInSe * before.second;
  };
  if (!gains(prev, first)) {
    factor = 2.0;
    lam = start;
    prev = first;
    from = 0;
  }
  bool bracketed = false;
  while (budget_left()) {
    lam *= factor;
    const auto e = run_at(lam, images[from]);
    from = images.size() - 1;
    if (!gains(e, prev)) {
      bracketed = true;
      break;
    }
    prev = e;
  }
  // Then up from the largest lambda run until one misfit lies above the one-SE threshold.
  OneStandardErrorChoice one = one_standard_error_choice(lambdas, squared);
  while (one.beyond < 0 && budget_left()) {
    const size_t top = static_cast<size_t>(std::max_element(lambdas.begin(), lambdas.end()) - lambdas.begin());
    run_at(lambdas[top] * 2.0, images[top]);
    one = one_standard_error_choice(lambdas, squared);
  }
  c.curve.best = one.chosen;
  const double scale = static_cast<double>(views) / static_cast<double>(train.size());
  c.lambda = one.lambda * scale;
  c.warm_start = images[static_cast<size_t>(one.chosen)];
  const LambdaPoint& low = c.curve.points[static_cast<size_t>(one.smallest)];
  char buf[700];
  std::snprintf(buf, sizeof buf,
                "held-out views: every %dth view (%zu of %lld) held out; %zu solves on the other %zu views on a x2 "
                "lambda grid from %.4g with warm starts; one-standard-error rule (Hastie, Tibshirani & Friedman, "
                "sec. 7.10): smallest held-out misfit ||A_h x - y_h||^2 = %.5g at lambda %.5g, its standard error "
                "%.3g (from the squared residuals of the %lld held-out rays); largest lambda with misfit <= %.5g: "
                "%.5g%s%s; scaled by %lld/%zu for all views: lambda = %.5g",
                kHoldOutEvery, held.size(), static_cast<long long>(views), c.curve.points.size(), train.size(), start,
                low.score, low.lambda, one.standard_error, static_cast<long long>(yh.size()), one.threshold,
                one.lambda, one.beyond >= 0 ? " (interpolated in log lambda to the crossing)" : " (grid point)",
                bracketed && one.beyond >= 0 ? "" : ", not bracketed within the solve limit",
                static_cast<long long>(views), train.size(), c.lambda);
  c.rule = buf;
  return c;
}


}  // namespace recofold
