// SPDX-License-Identifier: Apache-2.0
// Training examples drawn on the fly from phantom families and acquisition ranges.
#include "recofold/learn/training_data.h"

#include <algorithm>
#include <cmath>
#include <vector>

#include "recofold/acquire/ct_simulation.h"
#include "recofold/acquire/image_problem.h"
#include "recofold/acquire/mri.h"
#include "recofold/acquire/mri_trajectory.h"
#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/phantom/family.h"
#include "recofold/phantom/raster.h"
#include "recofold/sampling/mask.h"
#include "recofold/sampling/trajectory.h"

namespace recofold {

namespace {

template <typename T>
const T& pick(const std::vector<T>& v, Rng& rng) {
  return v[static_cast<size_t>(rng.below(v.size()))];
}

int pick_int(int lo, int hi, Rng& rng) { return lo + static_cast<int>(rng.below(static_cast<uint64_t>(hi - lo + 1))); }

}  // namespace

namespace {

// The example's family (first draw of the conditions stream) and object: object `index`
// of that family with family seed `seed`, as `recofold phantom --family F
// --seed S` and studies draw it.
Phantom draw_object(const TrainingConditions& c, uint64_t seed, uint64_t index, Rng& rng, Family* family) {
  *family = *parse_family(pick(c.families, rng));
  FamilyOptions fo = family_options(*family);
  fo.fov_mm = c.fov_mm;
  return make_family_object(fo, seed, index);
}

// The example's own draws (family, mask, acceleration, coils, noise) come
// from a stream apart from the object's: make_family_object draws the object
// from Rng::for_stream(seed, index), and the same stream here would tie the
// noise and mask seeds to the object's shape parameters.
Rng conditions_stream(uint64_t seed, uint64_t index) {
  constexpr uint64_t kConditionsStream = 0xD1B54A32D192ED03ull;  // any fixed odd constant
  return Rng::for_stream(seed ^ kConditionsStream, index);
}

// Coils, noise and the noise seed of an MRI example (drawn after its sampling, in this order).
MriSimulationOptions draw_mri_options(const TrainingConditions& c, bool analytic, Rng& rng) {
  MriSimulationOptions so;
  so.coil_array.coils = pick_int(c.coils_min, c.coils_max, rng);
  so.truth = analytic ? MriTruth::kAnalytic : MriTruth::kDiscrete;
  so.noise_sigma = rng.uniform(c.noise_min, c.noise_max);
  so.seed = rng.next_u64();
  return so;
}

}  // namespace

ImageF draw_training_object(const TrainingConditions& c, uint64_t seed, uint64_t index) {
  RECOFOLD_CHECK(c.validate().empty()) << "draw_training_object with invalid conditions";
  Rng rng = conditions_stream(seed, index);
  Family family;
  const ImageC image = rasterize(draw_object(c, seed, index, rng, &family), static_cast<int>(c.ny), static_cast<int>(c.nx));
  return image.real();
}

Measurement draw_training_example(const TrainingConditions& c, uint64_t seed, uint64_t index) {
  RECOFOLD_CHECK(c.validate().empty()) << "draw_training_example with invalid conditions";
  Rng rng = conditions_stream(seed, index);
  Family family;
  const Phantom object = draw_object(c, seed, index, rng, &family);
  const ImageC image = rasterize(object, static_cast<int>(c.ny), static_cast<int>(c.nx));
  const double pixel_mm = c.fov_mm / double(c.nx);
  const bool analytic = c.truth == "analytic";

  Measurement m;
  if (c.modality == Modality::kMri && !c.trajectory.empty()) {
    // Non-Cartesian: exact samples at the trajectory's points, rotated by a random first angle.
    TrajectoryOptions to;
    to.kind = *parse_trajectory_kind(c.trajectory);
    to.ny = c.ny;
    to.nx = c.nx;
    const int readouts = pick_int(c.readouts_min, c.readouts_max, rng);
    if (to.kind == TrajectoryKind::kSpiral) to.interleaves = readouts;
    else to.spokes = readouts;
    to.first_angle_deg = rng.uniform(0.0, 360.0);
    to.fov_mm = c.fov_mm;
    const Trajectory t = make_trajectory(to);
    const MriSimulationOptions so = draw_mri_options(c, analytic, rng);
    m = simulate_mri_trajectory_measurement(analytic ? &object : nullptr, image, pixel_mm, t, so);
  } else if (c.modality == Modality::kMri) {
    MaskOptions mo;
    mo.pattern = *parse_mask_pattern(pick(c.patterns, rng));
    mo.ny = c.ny;
    mo.nx = c.nx;
    mo.acceleration = rng.uniform(c.accel_min, c.accel_max);
    mo.center_fraction = c.center_fraction;
    mo.seed = rng.next_u64();
    const SamplingMask mask = make_mask(mo);
    const MriSimulationOptions so = draw_mri_options(c, analytic, rng);
    m = simulate_mri(analytic ? &object : nullptr, image, pixel_mm, mask, so);
  } else if (c.modality == Modality::kDenoise || c.modality == Modality::kInpaint) {
    // The raster itself plus white Gaussian noise (inpaint: on a drawn subset of pixels).
    ImageProblemOptions po;
    po.noise_sigma = rng.uniform(c.noise_min, c.noise_max);
    if (c.modality == Modality::kInpaint) {
      po.pattern = *parse_pixel_pattern(pick(c.patterns, rng));
      po.keep = rng.uniform(c.keep_min, c.keep_max);
    }
    po.seed = rng.next_u64();
    m = simulate_image_problem(c.modality, image, pixel_mm, po);
  } else {
    const int views = pick_int(c.views_min, c.views_max, rng);
    const double photons =
        c.photons_max > 0 ? std::exp(rng.uniform(std::log(c.photons_min), std::log(c.photons_max))) : 0.0;
    // Parallel beam, views equally spaced over the arc, the automatic detector
    // of acquire (ct_simulation.h), as `recofold simulate` and studies do.
    CtSimulationOptions so;
    so.scan.beam = CtBeam::kParallel;
    so.scan.views = views;
    so.scan.arc_deg = c.arc_deg;
    so.mu_per_mm = c.mu_per_mm;
    so.analytic = analytic;
    so.noisy = photons > 0;
    so.noise.photons_per_ray = photons > 0 ? photons : 1.0;
    so.seed = rng.next_u64();
    m = simulate_ct(analytic ? &object : nullptr, image, pixel_mm, so);
  }
  m.provenance.command = "draw_training_example";
  m.provenance.extra["seed"] = std::to_string(seed);
  m.provenance.extra["index"] = std::to_string(index);
  m.provenance.extra["family"] = std::string(to_string(family));
  return m;
}

}  // namespace recofold
