// SPDX-License-Identifier: Apache-2.0
// The held-out-views lambda rule for CT (lambda_held_out.h).
#include "recofold/recon/lambda_held_out.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <memory>

#include "recofold/core/error.h"
#include "recofold/ops/joseph_projector.h"
#include "recofold/recon/lambda_discrepancy.h"

namespace recofold {

namespace {

constexpr int kHoldOutEvery = 6;
// A step counts as an improvement only when it lowers the held-out misfit by
// more than this fraction; among grid points within this fraction of the
// smallest misfit the largest lambda is kept (on a plateau, iteration-limited
// solves barely change and the stronger prior is the safer choice).
constexpr double kHeldOutTolerance = 1e-3;

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

}  // namespace

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
    pt.score = static_cast<double>(r.squaredNorm());
    pt.iterations = static_cast<int>(s.iterations.size());
    pt.termination = s.termination;
    pt.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t).count();
    c.curve.points.push_back(pt);
    images.push_back(std::move(image));
    if (progress) {
      char buf[96];
      std::snprintf(buf, sizeof buf, "lambda %.3g held-out misfit %.4g", lambda, pt.score);
      progress->update(static_cast<int64_t>(c.curve.points.size()), max_steps, buf);
    }
    return pt.score;
  };
  // Walk a x2 grid with warm starts: down from the start while the held-out
  // misfit falls; when the first step down is already worse, up instead.
  const double e0 = run_at(start, VecC());
  double prev = run_at(start * 0.5, images.back());
  double factor = 0.5, lam = start * 0.5;
  size_t from = 1;
  if (prev > e0 * (1.0 - kHeldOutTolerance)) {
    factor = 2.0;
    lam = start;
    prev = e0;
    from = 0;
  }
  bool stopped = false;
  while (static_cast<int>(c.curve.points.size()) < max_steps) {
    lam *= factor;
    const double e = run_at(lam, images[from]);
    from = images.size() - 1;
    if (e > prev * (1.0 - kHeldOutTolerance)) {
      stopped = true;
      break;
    }
    prev = e;
  }
  // The best grid point and, when it has neighbours on both sides, a
  // parabola in log lambda through the three misfits.
  double smallest = c.curve.points[0].score;
  for (const LambdaPoint& pt : c.curve.points) smallest = std::min(smallest, pt.score);
  int best = -1;
  for (size_t k = 0; k < c.curve.points.size(); ++k)
    if (c.curve.points[k].score <= smallest * (1.0 + kHeldOutTolerance) &&
        (best < 0 || c.curve.points[k].lambda > c.curve.points[static_cast<size_t>(best)].lambda))
      best = static_cast<int>(k);
  c.curve.best = best;
  const double lb = c.curve.points[static_cast<size_t>(best)].lambda;
  double below = std::nan(""), above = std::nan("");
  for (const LambdaPoint& pt : c.curve.points) {
    if (std::abs(pt.lambda - 0.5 * lb) <= 1e-9 * lb) below = pt.score;
    if (std::abs(pt.lambda - 2.0 * lb) <= 1e-9 * lb) above = pt.score;
  }
  const double eb = c.curve.points[static_cast<size_t>(best)].score;
  const double h = std::log(2.0);
  double offset = 0.0;
  const bool refined = std::isfinite(below) && std::isfinite(above) && (below - 2.0 * eb + above) > 0.0;
  if (refined) offset = std::clamp(h * (below - above) / (2.0 * (below - 2.0 * eb + above)), -h, h);
  const double lambda_train = lb * std::exp(offset);
  const double scale = static_cast<double>(views) / static_cast<double>(train.size());
  c.lambda = lambda_train * scale;
  c.warm_start = images[static_cast<size_t>(best)];
  char buf[560];
  std::snprintf(buf, sizeof buf,
                "held-out views: every %dth view (%zu of %lld) held out; %zu solves on the other %zu views on a x2 "
                "lambda grid from %.4g with warm starts; held-out misfit ||A_h x - y_h||^2 smallest at lambda %.5g "
                "(%.5g; largest grid lambda within %.1g of the smallest misfit)%s%s; scaled by %lld/%zu for all views: "
                "lambda = %.5g",
                kHoldOutEvery, held.size(), static_cast<long long>(views), c.curve.points.size(), train.size(), start,
                lambda_train, eb, kHeldOutTolerance, refined ? ", log-parabola refined" : ", grid point (not refined)",
                stopped ? "" : ", minimum not bracketed within the solve limit",
                static_cast<long long>(views), train.size(), c.lambda);
  c.rule = buf;
  return c;
}


}  // namespace recofold
