// SPDX-License-Identifier: Apache-2.0
// reconstruct() on a non-Cartesian measurement record: zero-filled is gridding, the iterative methods
// see the SENSE-NUFFT forward model, and the Cartesian-only paths are refused by field.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <functional>
#include <string>

#include "recofold/acquire/mri_trajectory.h"
#include "recofold/core/error.h"
#include "recofold/metrics/image_quality.h"
#include "recofold/phantom/phantom_table.h"
#include "recofold/phantom/raster.h"
#include "recofold/recon/forward_model.h"
#include "recofold/recon/gridding.h"
#include "recofold/recon/reconstruct.h"
#include "recofold/sampling/trajectory.h"

namespace recofold {
namespace {

std::string source_dir() {
  if (const char* env = std::getenv("RECOFOLD_SOURCE_DIR")) return env;
  const std::string here = __FILE__;
  return here.substr(0, here.rfind("/tests/"));
}

constexpr Index kN = 48;
constexpr int kCoils = 3;

Trajectory radial(int spokes) {
  TrajectoryOptions to;
  to.kind = TrajectoryKind::kRadialGolden;
  to.ny = to.nx = kN;
  to.spokes = spokes;
  to.readout = 64;
  return make_trajectory(to);
}

Measurement radial_measurement() {
  const Phantom p = load_phantom_table(source_dir() + "/phantoms/shepp-logan-modified.toml");
  const ImageC raster = rasterize(p, static_cast<int>(kN), static_cast<int>(kN));
  MriSimulationOptions o;
  o.coil_array.coils = kCoils;
  o.noise_sigma = 0.002;
  o.seed = 3;
  return simulate_mri_trajectory_measurement(&p, raster, 1.0, radial(24), o);
}

void expect_field(const std::function<void()>& run, const std::string& field, const std::string& words) {
  try {
    run();
    FAIL() << "expected InputError for field " << field;
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), field) << e.what();
    EXPECT_NE(std::string(e.what()).find(words), std::string::npos) << e.what();
  }
}

TEST(TrajectoryReconstruct, TheRecordCarriesTheTrajectoryAndNoMask) {
  const Measurement m = radial_measurement();
  ASSERT_TRUE(m.mri && m.mri->non_cartesian());
  const Index points = 24 * 64;
  EXPECT_EQ(m.mri->kspace.shape, (Shape{kCoils, points}));
  EXPECT_EQ(m.mri->mask.size(), 0);
  EXPECT_EQ(m.mri->sample_count(), points);
  EXPECT_EQ(m.mri->pattern, "radial-golden");
  EXPECT_DOUBLE_EQ(m.mri->acceleration, static_cast<double>(kN * kN) / points);
  EXPECT_EQ(m.mri->coil_maps.shape, (Shape{kCoils, kN, kN}));
  EXPECT_EQ(m.truth_kind, "analytic");
  const ForwardModel f = make_forward_model(m);
  EXPECT_EQ(f.measured_values, kCoils * points);
  EXPECT_EQ(f.op->range_shape(), (Shape{kCoils, points}));
  EXPECT_NE(f.op->name().find("SENSE-NUFFT"), std::string::npos) << f.op->name();
}

TEST(TrajectoryReconstruct, ZeroFilledIsGriddingAndCgBeatsIt) {
  const Measurement m = radial_measurement();
  ReconSpec zf;
  zf.method = Method::kZeroFilled;
  const Reconstruction g = reconstruct(m, zf);
  const Trajectory& t = *m.mri->trajectory;
  const NufftPlan plan(kN, kN, t.kx, t.ky);
  const ImageC direct = gridding(plan, t.dcf, m.mri->kspace, m.mri->coil_maps, CoilCombine::kSensitivity);
  ASSERT_EQ(g.image.size(), direct.size());
  for (Index i = 0; i < direct.size(); ++i) ASSERT_EQ(g.image.data()[i], direct.data()[i]) << "pixel " << i;
  EXPECT_NE(g.description.find("gridding"), std::string::npos) << g.description;

  ReconSpec cg;
  cg.method = Method::kCg;
  const Reconstruction c = reconstruct(m, cg);
  EXPECT_NE(c.operator_name.find("SENSE-NUFFT"), std::string::npos) << c.operator_name;
  ImageF tr(kN, kN);
  for (Index i = 0; i < kN * kN; ++i) tr.data()[i] = std::abs(m.truth->data[static_cast<size_t>(i)]);
  const double p_grid = psnr(tr, g.image.abs()), p_cg = psnr(tr, c.image.abs());
  EXPECT_GT(p_cg, p_grid + 1.0) << "gridding " << p_grid << " dB, cg " << p_cg << " dB";
}

TEST(TrajectoryReconstruct, CartesianOnlyPathsAreRefusedByField) {
  const Measurement m = radial_measurement();
  ReconSpec fbp;
  fbp.method = Method::kFbp;
  expect_field([&] { reconstruct(m, fbp); }, "method", "fbp");
  // (unrolled runs on trajectories: its DC steps use the SENSE-NUFFT; tests/cli/recon_unrolled_trajectory.py)
  ReconSpec estimated;
  estimated.method = Method::kZeroFilled;
  estimated.maps = CoilMapSource::kEstimated;
  expect_field([&] { reconstruct(m, estimated); }, "maps", "non-Cartesian");
}

TEST(TrajectoryReconstruct, SimulationNeedsOneWeightPerPoint) {
  const Phantom p = load_phantom_table(source_dir() + "/phantoms/shepp-logan-modified.toml");
  const ImageC raster = rasterize(p, static_cast<int>(kN), static_cast<int>(kN));
  Trajectory t = radial(8);
  t.dcf.pop_back();
  expect_field([&] { simulate_mri_trajectory_measurement(&p, raster, 1.0, t, MriSimulationOptions{}); },
               "trajectory", "weights");
}

}  // namespace
}  // namespace recofold
