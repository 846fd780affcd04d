// SPDX-License-Identifier: Apache-2.0
// reconstruct_measurement: operator from the measurement, prior from the spec, solver, and the lambda-auto rules.
#include "recofold/recon/pipeline.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <memory>
#include <utility>

#include "recofold/core/error.h"
#include "recofold/ops/fourier.h"
#include "recofold/ops/joseph_projector.h"
#include "recofold/priors/l2.h"
#include "recofold/priors/zero_prior.h"
#include "recofold/recon/admm.h"
#include "recofold/recon/cg.h"
#include "recofold/recon/fista.h"
#include "recofold/recon/ista.h"
#include "recofold/recon/pdhg.h"

namespace recofold {

namespace {

std::string num(double v) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.6g", v);
  return buf;
}

// Maps a PriorSpec::validate field ("wavelet.levels = 5; ...") to the flag that sets it.
std::string flag_of_prior_field(const std::string& message) {
  if (message.rfind("wavelet.levels", 0) == 0) return "--levels";
  if (message.rfind("wavelet.", 0) == 0) return "--wavelet";
  if (message.rfind("prior.lambda", 0) == 0) return "--lambda";
  if (message.rfind("box.", 0) == 0) return "--nonneg";
  return "--prior";
}

// The solver with the settings documented in pipeline.h; `iterations` >= 1.
RegularisedSolve make_solve(SolverMethod method, const LinearOperator& a, const VecC& y, int iterations,
                            ProgressSink* progress) {
  const LinearOperator* ap = &a;
  const VecC* yp = &y;
  switch (method) {
    case SolverMethod::kFista:
      return [ap, yp, iterations, progress](const Prior& prior, VecC& x) {
        FistaOptions o;
        o.max_iterations = iterations;
        o.relative_tolerance = 0.0;
        return solve_fista(o, *ap, prior, *yp, x, progress);
      };
    case SolverMethod::kAdmm:
      return [ap, yp, iterations, progress](const Prior& prior, VecC& x) {
        AdmmOptions o;
        o.max_iterations = iterations;
        o.cg_iterations = 4;
        o.relative_tolerance = 1e-4;
        return solve_admm(o, *ap, prior, *yp, x, progress);
      };
    case SolverMethod::kPdhg:
      return [ap, yp, iterations, progress](const Prior& prior, VecC& x) {
        PdhgOptions o;
        o.max_iterations = iterations;
        o.relative_tolerance = 1e-4;
        o.record_gap = false;
        return solve_pdhg(o, *ap, prior, *yp, x, progress);
      };
    case SolverMethod::kCg:
    case SolverMethod::kIsta:
      break;
  }
  // cg and ista: the common entry point's settings are the documented ones.
  return make_regularised_solve(method, a, y, iterations, progress);
}

Index count_sampled(const MriData& mri) {
  Index n = 0;
  for (uint8_t v : mri.mask.data) n += v != 0;
  return n;
}

// The CT "lambda auto" rule (pipeline.h): held-out views.
constexpr int kHoldOutEvery = 6;
// A step counts as an improvement only when it lowers the held-out misfit by
// more than this fraction; among grid points within this fraction of the
// smallest misfit the largest lambda is kept (on a plateau, iteration-limited
// solves barely change and the stronger prior is the safer choice).
constexpr double kHeldOutTolerance = 1e-3;

struct HeldOutChoice {
  double lambda = 0.0;  // for all views
  std::string rule;
  LambdaCurve curve;  // lambda (training views), residual_squared (training), score (held-out misfit)
  VecC warm_start;    // the training image at the best grid lambda
};

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

HeldOutChoice choose_lambda_held_out_views(const Measurement& m, SolverMethod method, const Prior& prior, int iters,
                                           int max_steps, const std::string& file, ProgressSink* progress) {
  const Index views = m.ct->sinogram.shape[0];
  if (views < 2 * kHoldOutEvery)
    throw InputError(file, "--lambda",
                     "auto on CT holds out every " + std::to_string(kHoldOutEvery) + "th view and needs >= " +
                         std::to_string(2 * kHoldOutEvery) + " views; this file has " + std::to_string(views) +
                         "; give a number");
  std::vector<Index> train, held;
  for (Index v = 0; v < views; ++v) (v % kHoldOutEvery == kHoldOutEvery / 2 ? held : train).push_back(v);
  const Measurement mt = view_subset(m, train), mh = view_subset(m, held);
  const auto at = make_ct_operator(mt, file);
  const auto ah = make_ct_operator(mh, file);
  const VecC yt = ct_sinogram_vector(mt), yh = ct_sinogram_vector(mh);
  const RegularisedSolve solve = make_solve(method, *at, yt, iters, nullptr);

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

}  // namespace

int default_iterations(SolverMethod method) {
  switch (method) {
    case SolverMethod::kCg: return 12;
    case SolverMethod::kIsta: return 100;
    case SolverMethod::kFista: return 60;
    case SolverMethod::kAdmm: return 30;
    case SolverMethod::kPdhg: return 150;
  }
  return 60;
}

std::vector<std::string> ReconRequest::validate(Modality modality, const Shape& image_shape) const {
  std::vector<std::string> e;
  if (modality != Modality::kMri && modality != Modality::kCt)
    e.push_back("--meas: modality '" + std::string(to_string(modality)) + "'; expected mri or ct");
  if (iterations < 0)
    e.push_back("--iters = " + std::to_string(iterations) + "; must be >= 1 (0: the method's default)");
  for (const std::string& s : check_method_prior(method, prior.kind)) e.push_back(s);
  if (prior.kind == PriorKind::kNone && method != SolverMethod::kCg && method != SolverMethod::kAdmm)
    e.push_back("--prior = none; method " + std::string(to_string(method)) +
                " without a prior is plain least squares: use --method cg, or a prior (l2, wavelet, tv, tv-aniso)");
  if (prior.kind == PriorKind::kNone && lambda_auto)
    e.push_back("--lambda = auto; needs a prior (there is no weight to choose with --prior none)");
  if (!lambda_auto && !(prior.lambda >= 0.0 && std::isfinite(prior.lambda)))
    e.push_back("--lambda = " + num(prior.lambda) + "; must be >= 0 and finite, or auto");
  if (lambda_steps != 0 && lambda_steps < 2)
    e.push_back("request.lambda_steps = " + std::to_string(lambda_steps) + "; must be >= 2 (0: default)");
  if (prior.kind == PriorKind::kNone && prior.box)
    e.push_back("--nonneg needs a prior (--prior none is unconstrained least squares)");
  PriorSpec check = prior;
  if (lambda_auto || !(check.lambda >= 0.0)) check.lambda = 1.0;
  if (check.kind != PriorKind::kWavelet) check.wavelet = WaveletL1Options{};
  for (const std::string& s : check.validate(image_shape)) e.push_back(flag_of_prior_field(s) + ": " + s);
  return e;
}

ReconResult reconstruct_measurement(const Measurement& m, const ReconRequest& request, const std::string& file,
                                    ProgressSink* iterations, ProgressSink* lambda_progress) {
  const auto t0 = std::chrono::steady_clock::now();
  const Shape shape{m.ny, m.nx};
  {
    const std::vector<std::string> errors = request.validate(m.modality, shape);
    if (!errors.empty()) {
      std::string field = errors.front().substr(0, errors.front().find_first_of(" :"));
      std::string reason;
      for (const std::string& s : errors) reason += (reason.empty() ? "" : "; ") + s;
      throw InputError(file, field, reason);
    }
  }
  const bool mri = m.modality == Modality::kMri;
  if (mri && !m.mri) throw InputError(file, "/mri", "MRI measurement without MRI data");
  if (!mri && !m.ct) throw InputError(file, "/ct", "CT measurement without CT data");

  std::unique_ptr<LinearOperator> a;
  VecC y;
  if (mri) {
    a = make_sense_operator(*m.mri, file);
    y = kspace_vector(*m.mri);
  } else {
    a = make_ct_operator(m, file);
    y = ct_sinogram_vector(m);
  }
  const int iters = request.iterations > 0 ? request.iterations : default_iterations(request.method);

  PriorSpec spec = request.prior;
  if (request.lambda_auto) spec.lambda = 1.0;  // replaced by the sweep
  std::unique_ptr<Prior> prior;
  if (spec.kind == PriorKind::kNone) {
    prior = std::make_unique<ZeroPrior>();
  } else {
    prior = make_prior(spec, shape);
  }

  // Every solve's summary with its lambda, so the history of the chosen solve can be returned.
  std::vector<std::pair<double, SolverSummary>> runs;
  const RegularisedSolve inner = make_solve(request.method, *a, y, iters, iterations);
  RegularisedSolve solve = [&inner, &runs](const Prior& p, VecC& x) {
    SolverSummary s = inner(p, x);
    runs.emplace_back(p.weight(), s);
    return s;
  };

  ReconResult result;
  result.ny = m.ny;
  result.nx = m.nx;
  result.operator_name = a->name();
  VecC x;
  if (spec.kind == PriorKind::kNone) {
    result.summary = solve(*prior, x);
    result.lambda = 0.0;
    result.lambda_rule = "none (no prior)";
    result.lambda_rule_name = "none";
  } else if (!request.lambda_auto) {
    result.summary = solve(*prior, x);
    result.lambda = spec.lambda;
    result.lambda_rule = "given";
    result.lambda_rule_name = "given";
  } else if (mri) {
    DiscrepancyOptions d;
    d.noise_sigma = m.mri->noise_sigma;
    d.measurement_count = count_sampled(*m.mri) * m.mri->kspace.shape[0];
    d.complex_noise = true;
    d.max_steps = request.lambda_steps > 0 ? request.lambda_steps : 16;
    if (!(d.noise_sigma > 0.0))
      throw InputError(file, "--lambda",
                       "auto needs the measurement's noise sigma (/mri noise_sigma is " + num(d.noise_sigma) +
                           "); give a number");
    DiscrepancyChoice choice = choose_lambda_discrepancy(d, *a, y, *prior, solve, x, lambda_progress);
    result.lambda = choice.lambda;
    result.lambda_rule = choice.rule;
    result.lambda_rule_name = "discrepancy";
    result.lambda_target = choice.target;
    result.lambda_curve = choice.curve;
    // The summary of the (last) solve at the chosen lambda.
    for (auto it = runs.rbegin(); it != runs.rend(); ++it)
      if (it->first == choice.lambda) {
        result.summary = it->second;
        break;
      }
  } else {
    HeldOutChoice h = choose_lambda_held_out_views(m, request.method, *prior, iters,
                                                   request.lambda_steps > 0 ? request.lambda_steps : 12, file,
                                                   lambda_progress);
    result.lambda = h.lambda;
    result.lambda_rule = h.rule;
    result.lambda_rule_name = "held-out views";
    result.lambda_curve = std::move(h.curve);
    prior->set_weight(h.lambda);
    x = std::move(h.warm_start);
    result.summary = solve(*prior, x);
  }
  result.summary.values["lambda"] = result.lambda;
  result.image = std::move(x);
  char buf[300];
  std::snprintf(buf, sizeof buf, "%s%s%s, lambda %.5g (%s), %d iterations, %s",
                std::string(to_string(request.method)).c_str(),
                spec.kind == PriorKind::kNone ? "" : (" + " + std::string(to_string(spec.kind))).c_str(),
                spec.box ? " + non-negativity" : "", result.lambda, result.lambda_rule_name.c_str(),
                static_cast<int>(result.summary.iterations.size()), result.operator_name.c_str());
  result.description = buf;
  result.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  return result;
}

}  // namespace recofold
