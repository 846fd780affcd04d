// SPDX-License-Identifier: Apache-2.0
// reconstruct_measurement: operator from the measurement, prior from the spec, solver, and the lambda-auto rules.
#include "recofold/recon/pipeline.h"

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

std::vector<std::string> ReconRequest::validate(const std::string& modality, const Shape& image_shape) const {
  std::vector<std::string> e;
  if (modality != "mri" && modality != "ct")
    e.push_back("--meas: modality '" + modality + "'; expected mri or ct");
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
  if (lambda_steps < 0) e.push_back("lambda steps = " + std::to_string(lambda_steps) + "; must be >= 2 (0: default)");
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
  const bool mri = m.modality == "mri";
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
  } else {
    DiscrepancyOptions d;
    std::string prefix;
    if (mri) {
      d.noise_sigma = m.mri->noise_sigma;
      d.measurement_count = count_sampled(*m.mri) * m.mri->kspace.shape[0];
      d.complex_noise = true;
      d.max_steps = request.lambda_steps > 0 ? request.lambda_steps : 16;
      if (!(d.noise_sigma > 0.0))
        throw InputError(file, "--lambda",
                         "auto needs the measurement's noise sigma (/mri noise_sigma is " + num(d.noise_sigma) +
                             "); give a number");
      result.noise_energy = discrepancy_target(d.measurement_count, d.noise_sigma, true);
      result.lambda_rule_name = "discrepancy";
    } else {
      const double photons = m.ct->photons_per_ray;
      const double e = photons > 0.0 ? transmission_noise_energy(y, photons) : 0.0;
      // The misfit floor: the same solver without regularisation (lambda 0, same box).
      std::unique_ptr<Prior> free = prior->clone();
      free->set_weight(0.0);
      VecC x0;
      inner(*free, x0);
      VecC r;
      a->apply(x0, r);
      r -= y;
      const double floor = r.squaredNorm();
      result.misfit_floor = floor;
      result.noise_energy = e;
      d.target = e > 0.0 ? floor + e : 1.1 * floor;
      d.max_steps = request.lambda_steps > 0 ? request.lambda_steps : 14;
      if (!(d.target > 0.0))
        throw InputError(file, "--lambda", "auto: the unregularised solve fits the sinogram exactly; give a number");
      char buf[300];
      if (e > 0.0)
        std::snprintf(buf, sizeof buf,
                      "floor-corrected discrepancy: target = misfit floor F (lambda 0, same solver, %d iterations) "
                      "%.5g + transmission noise energy E (sum exp(p)/I0, I0 = %.4g) %.5g = %.5g; ",
                      iters, floor, photons, e, d.target);
      else
        std::snprintf(buf, sizeof buf,
                      "floor-corrected discrepancy (noiseless file): target = 1.1 x misfit floor F (lambda 0, same "
                      "solver, %d iterations) %.5g = %.5g; ",
                      iters, floor, d.target);
      prefix = buf;
      result.lambda_rule_name = "floor-corrected discrepancy";
    }
    DiscrepancyChoice choice = choose_lambda_discrepancy(d, *a, y, *prior, solve, x, lambda_progress);
    result.lambda = choice.lambda;
    result.lambda_rule = prefix + choice.rule;
    // The summary of the (last) solve at the chosen lambda.
    for (auto it = runs.rbegin(); it != runs.rend(); ++it)
      if (it->first == choice.lambda) {
        result.summary = it->second;
        break;
      }
    result.choice = std::move(choice);
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
