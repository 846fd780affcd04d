// SPDX-License-Identifier: Apache-2.0
// Simulation and reconstruction of one study case by direct calls into acquire, recon, priors and metrics.
#include "recofold/study/case_runner.h"

#include <chrono>
#include <cmath>
#include <exception>
#include <memory>

#include "recofold/acquire/ct_simulation.h"
#include "recofold/acquire/mri.h"
#include "recofold/core/error.h"
#include "recofold/ops/ct_geometry.h"
#include "recofold/ops/fourier.h"
#include "recofold/ops/joseph_projector.h"
#include "recofold/phantom/family.h"
#include "recofold/phantom/phantom_table.h"
#include "recofold/phantom/raster.h"
#include "recofold/priors/prior_spec.h"
#include "recofold/recon/admm.h"
#include "recofold/recon/cg.h"
#include "recofold/recon/fbp.h"
#include "recofold/recon/fista.h"
#include "recofold/recon/ista.h"
#include "recofold/recon/lambda_discrepancy.h"
#include "recofold/recon/pdhg.h"
#include "recofold/recon/pipeline.h"
#include "recofold/recon/zero_filled.h"
#include "recofold/sampling/mask.h"
#include "recofold/sampling/view_set.h"
#include "recofold/study/learned_models.h"

namespace recofold {

namespace {

Phantom make_phantom(const StudyPhantom& p) {
  if (!p.table_path.empty()) return load_phantom_table(p.table_path);
  const Family family = *parse_family(p.family);
  return make_family_object(family_options(family), p.family_seed, static_cast<uint64_t>(p.family_index));
}

ImageF disc_region(Index ny, Index nx, double radius) {
  ImageF r(ny, nx);
  for (Index iy = 0; iy < ny; ++iy)
    for (Index ix = 0; ix < nx; ++ix) {
      const double x = -1.0 + (2.0 * double(ix) + 1.0) / double(nx);
      const double y = 1.0 - (2.0 * double(iy) + 1.0) / double(ny);
      r(iy, ix) = (x * x + y * y <= radius * radius) ? 1.0f : 0.0f;
    }
  return r;
}

ImageF image_of(const VecC& x, Index ny, Index nx, bool magnitude) {
  ImageF out(ny, nx);
  for (Index k = 0; k < ny * nx; ++k) out.data()[k] = magnitude ? std::abs(x[k]) : x[k].real();
  return out;
}

ImageF image_of(const ImageC& x, bool magnitude) {
  ImageF out(x.rows(), x.cols());
  for (Index k = 0; k < x.size(); ++k) out.data()[k] = magnitude ? std::abs(x.data()[k]) : x.data()[k].real();
  return out;
}

// One solver run with weight `lambda` (or, when `lambda` is NaN, with the weight
// chosen by the discrepancy principle); returns the image, the weight used and
// the iteration count of the final solve.
ImageF run_solver(const StudyMethod& method, const Measurement& m, double lambda, double* lambda_used,
                  int* iterations) {
  const bool mri = m.modality == Modality::kMri;
  std::unique_ptr<LinearOperator> op;
  VecC y;
  if (mri) {
    op = make_sense_operator(*m.mri);
    y = kspace_vector(*m.mri);
  } else {
    op = make_ct_operator(m);
    y = ct_sinogram_vector(m);
  }
  const Shape shape{m.ny, m.nx};
  VecC x;
  SolverSummary summary;
  *lambda_used = lambda;
  if (method.method == "cg") {
    CgOptions o;
    o.max_iterations = method.iterations;
    o.tikhonov = method.prior == "l2" ? lambda : 0.0;
    o.record_objective = false;
    summary = solve_cg(o, *op, y, x);
    if (method.prior != "l2") *lambda_used = std::numeric_limits<double>::quiet_NaN();
  } else {
    PriorSpec spec;
    spec.kind = *parse_prior(method.prior);
    spec.lambda = std::isnan(lambda) ? 1.0 : lambda;
    if (const auto w = parse_wavelet(method.wavelet)) spec.wavelet.family = *w;
    else throw InputError("", "method.wavelet", "'" + method.wavelet + "'; expected db1, db2, db3 or db4");
    spec.wavelet.levels = method.levels;
    spec.tv.isotropic = spec.kind != PriorKind::kTvAniso;
    const bool nonneg = method.nonneg.value_or(!mri);
    if (nonneg) spec.box = Box{};
    const std::unique_ptr<Prior> prior = make_prior(spec, shape);
    const int iters = method.iterations;
    const std::string name = method.method;
    const LinearOperator& a = *op;
    const RegularisedSolve solve = [&a, &y, iters, name](const Prior& p, VecC& xs) {
      if (name == "ista") {
        IstaOptions o;
        o.max_iterations = iters;
        o.record_objective = false;
        return solve_ista(o, a, p, y, xs);
      }
      if (name == "fista") {
        FistaOptions o;
        o.max_iterations = iters;
        o.record_objective = false;
        return solve_fista(o, a, p, y, xs);
      }
      if (name == "admm") {
        AdmmOptions o;
        o.max_iterations = iters;
        o.record_objective = false;
        return solve_admm(o, a, p, y, xs);
      }
      if (name == "pdhg") {
        PdhgOptions o;
        o.max_iterations = iters;
        o.record_gap = false;
        return solve_pdhg(o, a, p, y, xs);
      }
      throw InputError("", "method.method", "'" + name + "' is not a solver");
    };
    if (std::isnan(lambda) && !mri) {
      // CT "auto": the held-out-views rule shared with `recofold recon`
      // (recon/pipeline.h). The plain discrepancy target cannot be reached
      // with exact line integrals: the projector's model misfit exceeds the
      // Poisson noise energy.
      ReconRequest request;
      request.method = *parse_solver_method(name);
      request.prior = spec;
      request.lambda_auto = true;
      request.iterations = iters;
      const ReconResult r = reconstruct_measurement(m, request);
      *lambda_used = r.lambda;
      *iterations = static_cast<int>(r.summary.iterations.size());
      return image_of(r.image, m.ny, m.nx, mri);
    }
    if (std::isnan(lambda)) {
      DiscrepancyOptions d;
      if (mri) {
        if (!(m.mri->noise_sigma > 0.0))
          throw InputError("", "method.lambda", "auto needs noisy data (the discrepancy principle matches the noise)");
        Index sampled = 0;
        for (uint8_t v : m.mri->mask.data) sampled += v != 0;
        d.noise_sigma = m.mri->noise_sigma;
        d.measurement_count = sampled * (m.mri->kspace.shape.rank() == 3 ? m.mri->kspace.shape[0] : 1);
        d.complex_noise = true;
      } else {
        if (!(m.ct->photons_per_ray > 0.0))
          throw InputError("", "method.lambda", "auto needs noisy data (photons > 0)");
        d.target = transmission_noise_energy(y, m.ct->photons_per_ray);
        d.complex_noise = false;
      }
      d.max_steps = 10;
      const DiscrepancyChoice choice = choose_lambda_discrepancy(d, a, y, *prior, solve, x);
      *lambda_used = choice.lambda;
      *iterations = choice.curve.points.empty() ? 0 : choice.curve.points.back().iterations;
      return image_of(x, m.ny, m.nx, mri);
    }
    summary = solve(*prior, x);
  }
  if (!summary.is_usable()) throw WorkError(method.method + ": " + summary.brief_report());
  *iterations = static_cast<int>(summary.iterations.size());
  return image_of(x, m.ny, m.nx, mri);
}

}  // namespace

CaseMeasurement simulate_case_measurement(const StudyConfig& config, const StudyPhantom& sp, const Acquisition& acq,
                                          uint64_t mask_seed, uint64_t noise_seed) {
  const Phantom phantom = make_phantom(sp);
  const int ny = static_cast<int>(config.ny), nx = static_cast<int>(config.nx);
  const ImageC raster = rasterize(phantom, ny, nx);
  const double pixel = phantom.fov_mm / double(nx);
  CaseMeasurement out;
  if (acq.modality == Modality::kMri) {
    MaskOptions mo;
    mo.pattern = *parse_mask_pattern(acq.pattern);
    mo.ny = ny;
    mo.nx = nx;
    mo.acceleration = acq.accel;
    mo.center_fraction = config.mri->center_fraction;
    mo.seed = mask_seed;
    const SamplingMask mask = make_mask(mo);
    MriSimulationOptions so;
    so.coil_array.coils = acq.coils;
    so.noise_sigma = acq.noise;
    so.seed = noise_seed;
    out.measurement = simulate_mri(&phantom, raster, pixel, mask, so);
    out.truth = image_of(raster, true);
  } else {
    // Parallel beam, views equally spaced over the arc, acquire's automatic
    // detector (ct_simulation.h), as `recofold simulate` does.
    CtSimulationOptions so;
    so.scan.beam = CtBeam::kParallel;
    so.scan.views = acq.views;
    so.scan.arc_deg = acq.arc;
    so.mu_per_mm = config.ct->mu_per_mm;
    so.analytic = true;
    so.noisy = acq.photons > 0.0;
    so.noise.photons_per_ray = acq.photons > 0.0 ? acq.photons : 1.0;
    so.seed = noise_seed;
    out.measurement = simulate_ct(&phantom, raster, pixel, so);
    out.truth = image_of(raster, false);
  }
  if (config.region_radius > 0.0) out.region = disc_region(ny, nx, config.region_radius);
  return out;
}

CaseOutcome run_case_method(const StudyMethod& method, const CaseMeasurement& data, const LearnedModelSet* learned) {
  CaseOutcome out;
  ScoreOptions so;
  so.region = data.region;
  const Measurement& m = data.measurement;
  const auto start = std::chrono::steady_clock::now();
  try {
    if (method.method == "zero-filled") {
      const bool sense = m.mri && m.mri->coil_maps.size() > 0;
      out.image = image_of(zero_filled(*m.mri, sense ? CoilCombine::kSensitivity : CoilCombine::kSumOfSquares), true);
    } else if (method.method == "fbp") {
      FbpOptions o;
      o.filter = *parse_fbp_filter(method.filter);
      out.image = fbp(m, o);
    } else if (method.method == "unrolled") {
      if (learned == nullptr) throw WorkError("learned method '" + method.name + "' has no model loaded");
      out.image = image_of(learned->reconstruct(method.name, m, &out.outside), m.modality == Modality::kMri);
      out.in_training = out.outside.empty() ? "yes" : "no";
    } else {
      const std::vector<double> lambdas =
          method.lambda_auto ? std::vector<double>{std::numeric_limits<double>::quiet_NaN()}
                             : (method.lambdas.empty() ? std::vector<double>{0.0} : method.lambdas);
      double best = -std::numeric_limits<double>::infinity();
      for (double lambda : lambdas) {
        int iterations = 0;
        double used = lambda;
        ImageF image = run_solver(method, m, lambda, &used, &iterations);
        const double p = lambdas.size() > 1 ? psnr(data.truth, image, so) : 0.0;
        if (lambdas.size() == 1 || p > best) {
          best = p;
          out.image = std::move(image);
          out.iterations = iterations;
          out.lambda = used;
        }
      }
    }
    out.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    out.scores = score_images(data.truth, out.image, so);
    out.ok = true;
  } catch (const std::exception& e) {
    out.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    out.ok = false;
    out.error = e.what();
  }
  return out;
}

}  // namespace recofold
