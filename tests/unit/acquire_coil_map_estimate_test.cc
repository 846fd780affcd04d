// SPDX-License-Identifier: Apache-2.0
// Coil maps estimated for a reconstruction (recon/coil_map_estimate.h), Cartesian and on a
// trajectory: ESPIRiT maps agree with the simulator's true maps in the subspace sense
// (ops/espirit.h: map_subspace_error, the sine of the angle per pixel), and CG-SENSE with
// them comes close to CG-SENSE with the true maps.
#include <gtest/gtest.h>

#include <string>

#include "recofold/acquire/mri.h"
#include "recofold/acquire/mri_trajectory.h"
#include "recofold/core/error.h"
#include "recofold/metrics/image_quality.h"
#include "recofold/phantom/phantom_table.h"
#include "recofold/phantom/raster.h"
#include "recofold/recon/coil_map_estimate.h"
#include "recofold/recon/reconstruct.h"
#include "recofold/sampling/mask.h"
#include "recofold/sampling/trajectory.h"
#include "phantom_test_util.h"

namespace recofold {
namespace {

constexpr Index kN = 64;

struct Object {
  Phantom phantom = testing::load_repo_phantom("shepp-logan-modified");
  ImageC raster = rasterize(phantom, static_cast<int>(kN), static_cast<int>(kN));
};

MriSimulationOptions coils(int count) {
  MriSimulationOptions o;
  o.coil_array.coils = count;
  o.noise_sigma = 0.002;
  o.seed = 5;
  return o;
}

Measurement cartesian(const Object& obj, double center, MaskPattern pattern = MaskPattern::kPoissonDisc) {
  MaskOptions mo;
  mo.pattern = pattern;
  mo.ny = mo.nx = kN;
  mo.acceleration = 3.0;
  mo.center_fraction = center;
  mo.seed = 2;
  return simulate_mri(&obj.phantom, obj.raster, 1.0, make_mask(mo), coils(6));
}

Measurement radial(const Object& obj) {
  TrajectoryOptions to;
  to.kind = TrajectoryKind::kRadialGolden;
  to.ny = to.nx = kN;
  to.spokes = 48;
  to.readout = 2 * kN;
  return simulate_mri_trajectory_measurement(&obj.phantom, obj.raster, 1.0, make_trajectory(to), coils(6));
}

// Mean subspace error over the object (|truth| > 0.1), where the maps matter.
double object_map_error(const Measurement& estimated, const Measurement& truth) {
  const ImageF err = map_subspace_error(estimated.mri->coil_maps, truth.mri->coil_maps);
  double sum = 0.0;
  int count = 0;
  for (Index k = 0; k < kN * kN; ++k)
    if (std::abs(truth.truth->data[static_cast<size_t>(k)]) > 0.1) {
      sum += err.data()[k];
      ++count;
    }
  return sum / count;
}

double cg_psnr(const Measurement& m, CoilMapSource maps) {
  ReconSpec s;
  s.method = Method::kCg;
  s.iterations = 15;
  s.maps = maps;
  const Reconstruction r = reconstruct(m, s);
  ImageF truth(kN, kN), image(kN, kN);
  for (Index k = 0; k < kN * kN; ++k) {
    truth.data()[k] = std::abs(m.truth->data[static_cast<size_t>(k)]);
    image.data()[k] = std::abs(r.image.data()[k]);
  }
  return psnr(truth, image);
}

TEST(CoilMapEstimate, MeasuredLeavesTheFileMaps) {
  const Object obj;
  Measurement m = cartesian(obj, 0.3);
  const Measurement before = m;
  EXPECT_EQ(replace_coil_maps(m, CoilMapSource::kMeasured), "");
  EXPECT_EQ(m.mri->coil_maps.data, before.mri->coil_maps.data);
  EXPECT_EQ(m.mri->coil_maps_source, before.mri->coil_maps_source);
}

TEST(CoilMapEstimate, EspiritOnCartesianDataMatchesTheTrueMaps) {
  const Object obj;
  const Measurement truth = cartesian(obj, 0.3);
  Measurement m = truth;
  const std::string summary = replace_coil_maps(m, CoilMapSource::kEspirit);
  EXPECT_NE(summary.find("ESPIRiT"), std::string::npos) << summary;
  EXPECT_EQ(m.mri->coil_maps_source, "espirit");
  EXPECT_EQ(m.mri->coil_maps.shape, truth.mri->coil_maps.shape);
  EXPECT_LT(object_map_error(m, truth), 0.03);  // measured 0.006 (Cartesian), 0.015 (radial)
  // Reconstruction with the estimated maps: within 0.5 dB of the true maps (measured 0.25, 0.33 dB).
  EXPECT_GT(cg_psnr(truth, CoilMapSource::kEspirit), cg_psnr(truth, CoilMapSource::kMeasured) - 0.5);
}

TEST(CoilMapEstimate, EspiritFromTheTrajectoryCentre) {
  const Object obj;
  const Measurement truth = radial(obj);
  Measurement m = truth;
  const std::string summary = replace_coil_maps(m, CoilMapSource::kEspirit);
  EXPECT_NE(summary.find("CG-NUFFT coil images"), std::string::npos) << summary;
  EXPECT_LT(object_map_error(m, truth), 0.03);  // measured 0.006 (Cartesian), 0.015 (radial)
  EXPECT_GT(cg_psnr(truth, CoilMapSource::kEspirit), cg_psnr(truth, CoilMapSource::kMeasured) - 0.5);
}

TEST(CoilMapEstimate, RefusalsNameTheField) {
  const Object obj;
  Measurement traj = radial(obj);
  try {
    replace_coil_maps(traj, CoilMapSource::kEstimated, "t.h5");
    FAIL() << "estimated maps of a trajectory must be refused";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "maps");
    EXPECT_NE(std::string(e.what()).find("non-Cartesian"), std::string::npos) << e.what();
  }
  // Equispaced lines without a fully sampled centre: no 7x7 block for the 6x6 kernel.
  Measurement small = cartesian(obj, 0.0, MaskPattern::kLinesUniform);
  try {
    replace_coil_maps(small, CoilMapSource::kEspirit, "s.h5");
    FAIL() << "a calibration block smaller than the kernel must be refused";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "/mri/mask") << e.what();
  }
  Measurement ct;
  ct.modality = Modality::kCt;
  EXPECT_THROW(replace_coil_maps(ct, CoilMapSource::kEspirit), InputError);
}

}  // namespace
}  // namespace recofold
