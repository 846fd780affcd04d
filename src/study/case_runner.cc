// SPDX-License-Identifier: Apache-2.0
// One study case: simulation by acquire, reconstruction by recon's reconstruct(), scores by metrics.
#include "recofold/study/case_runner.h"

#include <chrono>
#include <cmath>
#include <exception>
#include <memory>
#include <optional>

#include "recofold/acquire/ct_simulation.h"
#include "recofold/acquire/image_problem.h"
#include "recofold/acquire/mri.h"
#include "recofold/acquire/mri_trajectory.h"
#include "recofold/acquire/retrospective.h"
#include "recofold/core/error.h"
#include "recofold/core/hash.h"
#include "recofold/core/rng.h"
#include "recofold/phantom/family.h"
#include "recofold/phantom/phantom_table.h"
#include "recofold/phantom/raster.h"
#include "recofold/recon/reconstruct.h"
#include "recofold/sampling/mask.h"
#include "recofold/sampling/trajectory.h"
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


ImageF image_of(const ImageC& x, bool magnitude) {
  ImageF out(x.rows(), x.cols());
  for (Index k = 0; k < x.size(); ++k) out.data()[k] = magnitude ? std::abs(x.data()[k]) : x.data()[k].real();
  return out;
}

// A non-Cartesian measured object as measured, with complex Gaussian noise of
// std `sigma` per part added to every sample (stream `seed`).
Measurement measured_with_noise(const Measurement& source, double sigma, uint64_t seed) {
  Measurement m = source;
  MriData& d = *m.mri;
  if (sigma > 0.0) {
    const Index coils = d.kspace.shape[0], points = d.kspace.shape[1];
    d.kspace.shape = Shape{coils, 1, points};  // the Cartesian noise helper on a grid sampled everywhere
    Rng rng(seed);
    add_kspace_noise(d.kspace, NdArray<uint8_t>(Shape{1, points}, 1), sigma, 0.0, rng);
    d.kspace.shape = Shape{coils, points};
  }
  d.numbers["source_noise_sigma"] = source.mri->noise_sigma;
  d.numbers["added_noise_sigma"] = sigma;
  d.noise_sigma = std::sqrt(source.mri->noise_sigma * source.mri->noise_sigma + sigma * sigma);
  return m;
}

}  // namespace

namespace {
std::string kept_name(const std::string& key) {
  std::string n;
  for (char ch : key) n += ch == '|' ? '_' : ch == '/' ? '-' : ch;
  return n + "-" + fnv1a_hex(key).substr(0, 8) + ".h5";
}
}  // namespace

std::string kept_measurement_file(const std::string& measurement_key) {
  return "measurements/" + kept_name(measurement_key);
}
std::string kept_image_file(const std::string& case_key) { return "images/" + kept_name(case_key); }

CaseMeasurement simulate_case_measurement(const StudyConfig& config, const StudyPhantom& sp, const Acquisition& acq,
                                          uint64_t mask_seed, uint64_t noise_seed) {
  const int ny = static_cast<int>(config.ny), nx = static_cast<int>(config.nx);
  // Tables and families are analytic objects; an image object is its pixels
  // (no analytic truth); a measured object is undersampled, not simulated.
  std::optional<Phantom> phantom;
  if (!sp.measured && !sp.pixels) phantom = make_phantom(sp);
  const ImageC raster = phantom ? rasterize(*phantom, ny, nx) : sp.pixels ? *sp.pixels : ImageC();
  const double pixel = phantom ? phantom->fov_mm / double(nx) : sp.pixel_spacing_mm;
  const Phantom* analytic = phantom ? &*phantom : nullptr;
  CaseMeasurement out;
  if (acq.modality == Modality::kMri && sp.measured && sp.measured->mri->non_cartesian()) {
    out.measurement = measured_with_noise(*sp.measured, acq.noise, noise_seed);
    out.truth = image_of(ConstImageCMap(out.measurement.truth->ptr(), ny, nx), true);
  } else if (acq.modality == Modality::kMri && acq.non_cartesian()) {
    // As `simulate --trajectory`: exact samples at the points (discrete for [[object]] images).
    MriSimulationOptions so;
    so.coil_array.coils = acq.coils;
    so.noise_sigma = acq.noise;
    so.seed = noise_seed;
    so.truth = analytic ? MriTruth::kAnalytic : MriTruth::kDiscrete;
    const Trajectory t = make_trajectory(trajectory_options(config, acq));
    out.measurement = simulate_mri_trajectory_measurement(analytic, raster, pixel, t, so);
    out.truth = image_of(raster, true);
  } else if (acq.modality == Modality::kMri) {
    MaskOptions mo;
    mo.pattern = *parse_mask_pattern(acq.pattern);
    mo.ny = ny;
    mo.nx = nx;
    mo.acceleration = acq.accel;
    mo.center_fraction = config.mri->center_fraction;
    mo.seed = mask_seed;
    const SamplingMask mask = make_mask(mo);
    if (sp.measured) {
      RetrospectiveOptions ro;
      ro.added_noise_sigma = acq.noise;
      ro.seed = noise_seed;
      out.measurement = undersample_retrospectively(*sp.measured, mask, ro, sp.measurement_path);
      out.truth = image_of(ConstImageCMap(out.measurement.truth->ptr(), ny, nx), true);
    } else {
      MriSimulationOptions so;
      so.coil_array.coils = acq.coils;
      so.noise_sigma = acq.noise;
      so.seed = noise_seed;
      so.truth = analytic ? MriTruth::kAnalytic : MriTruth::kDiscrete;
      out.measurement = simulate_mri(analytic, raster, pixel, mask, so);
      out.truth = image_of(raster, true);
    }
  } else if (acq.modality == Modality::kDenoise || acq.modality == Modality::kInpaint) {
    ImageProblemOptions io;
    io.noise_sigma = acq.noise;
    if (acq.modality == Modality::kInpaint) {
      io.keep = acq.keep;
      io.pattern = *parse_pixel_pattern(acq.pattern);
      io.block_size = config.inpaint->block_size;
      io.pattern_seed = mask_seed;
    }
    io.seed = noise_seed;
    out.measurement = simulate_image_problem(acq.modality, raster, pixel, io);
    out.truth = image_of(raster, false);
  } else {
    // Parallel beam, views equally spaced over the arc, acquire's automatic
    // detector (ct_simulation.h), as `recofold simulate` does.
    CtSimulationOptions so;
    so.scan.beam = CtBeam::kParallel;
    so.scan.views = acq.views;
    so.scan.arc_deg = acq.arc;
    so.mu_per_mm = config.ct->mu_per_mm;
    so.analytic = analytic != nullptr;
    so.noisy = acq.photons > 0.0;
    so.noise.photons_per_ray = acq.photons > 0.0 ? acq.photons : 1.0;
    so.seed = noise_seed;
    out.measurement = simulate_ct(analytic, raster, pixel, so);
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
  const bool magnitude = m.modality == Modality::kMri;
  const auto start = std::chrono::steady_clock::now();
  try {
    ReconSpec spec = method.spec;
    if (method.learned()) {
      spec.model = learned ? learned->model_path(method.name) : "";
      if (spec.model.empty()) throw WorkError("learned method '" + method.name + "' has no model loaded");
    }
    ReconHooks hooks;
    hooks.record_history = false;
    // The oracle rule scores in the study's region; without one the default
    // (squared error against the measurement's truth) chooses alike.
    if (data.region.size() > 0)
      hooks.oracle_score = [&](const ImageC& img) { return psnr(data.truth, image_of(img, magnitude), so); };
    const Reconstruction r = reconstruct(m, spec, hooks);
    out.image = image_of(r.image, magnitude);
    out.record = reconstruction_record(m, r);
    out.iterations = static_cast<int>(r.summary.iterations.size());
    out.lambda = r.lambda.value;
    if (method.learned()) {
      out.outside = r.outside_training;
      out.in_training = out.outside.empty() ? "yes" : "no";
    }
    if (is_iterative(r.spec.method) && !r.summary.is_usable())
      throw WorkError(method.name + ": " + r.summary.brief_report());
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
