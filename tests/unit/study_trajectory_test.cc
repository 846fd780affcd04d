// SPDX-License-Identifier: Apache-2.0
// Studies on non-Cartesian trajectories: [mri] trajectory axes, the case grid, bad keys, the simulated cases.
#include <gtest/gtest.h>

#include <cmath>
#include <set>
#include <string>

#include "recofold/acquire/mri_trajectory.h"
#include "recofold/core/error.h"
#include "recofold/phantom/raster.h"
#include "recofold/sampling/trajectory.h"
#include "recofold/study/case_grid.h"
#include "recofold/study/case_runner.h"
#include "recofold/study/study_config.h"
#include "unit/phantom_test_util.h"

namespace recofold {
namespace {

using testing::source_dir;

// A Cartesian pattern at R 4 and radial protocols on 32²: 8 spokes of 32
// samples are 256 = 32² / 4 samples, the Cartesian R 4's count.
const char* kMixed = R"(
size = 32
[[phantom]]
table = "phantoms/qc-disk.toml"
[mri]
pattern = "lines-vd"
accel = 4
coils = [1, 2]
trajectory = ["radial", "radial-golden", "spiral"]
spokes = [8, 16]
readout = 32
interleaves = 4
[[method]]
method = "zero-filled"
[[method]]
method = "cg"
iters = 5
)";

StudyConfig parse(const std::string& text) { return StudyConfig::parse(text, "traj.toml", source_dir()); }

std::string error_of(const std::string& text) {
  try {
    parse(text);
  } catch (const InputError& e) {
    return e.field() + ": " + e.reason();
  }
  return "";
}

std::string replaced(std::string text, const std::string& from, const std::string& to) {
  const size_t at = text.find(from);
  EXPECT_NE(at, std::string::npos) << from;
  return at == std::string::npos ? text : text.replace(at, from.size(), to);
}

TEST(StudyTrajectory, ParsesTheAxes) {
  const StudyConfig c = parse(kMixed);
  ASSERT_TRUE(c.mri);
  EXPECT_EQ(c.mri->patterns, std::vector<std::string>({"lines-vd"}));
  EXPECT_EQ(c.mri->trajectories, std::vector<std::string>({"radial", "radial-golden", "spiral"}));
  EXPECT_EQ(c.mri->spokes, std::vector<int>({8, 16}));
  EXPECT_EQ(c.mri->interleaves, std::vector<int>({4}));
  EXPECT_EQ(c.mri->readout, 32);
}

TEST(StudyTrajectory, GridHoldsCartesianAndTrajectoryAcquisitions) {
  const StudyConfig c = parse(kMixed);
  const CaseGrid g = expand_grid(c);
  // Cartesian: 1 pattern x 1 R x 2 coils; radial kinds: 2 x 2 spokes x 2 coils; spiral: 1 x 2 coils.
  ASSERT_EQ(g.acquisitions.size(), 2u + 8u + 2u);
  EXPECT_EQ(g.cases.size(), g.acquisitions.size() * 2u);
  std::set<std::string> keys;
  for (const StudyCase& k : g.cases) EXPECT_TRUE(keys.insert(k.key).second) << k.key;
  EXPECT_TRUE(keys.count("qc-disk|mri/radial-golden/8x32/c2/s0|cg|r0"));
  EXPECT_TRUE(keys.count("qc-disk|mri/lines-vd/R4/c1/s0|zero-filled|r0"));
  int cartesian = 0, radial8 = 0;
  for (const Acquisition& a : g.acquisitions) {
    if (!a.non_cartesian()) {
      ++cartesian;
      EXPECT_EQ(axis_value(a, "pattern"), "lines-vd");
      for (const char* axis : {"trajectory", "readouts", "samples"}) EXPECT_EQ(axis_value(a, axis), "") << axis;
      continue;
    }
    EXPECT_EQ(axis_value(a, "pattern"), "") << a.key();
    EXPECT_EQ(axis_value(a, "trajectory"), a.trajectory);
    EXPECT_EQ(axis_value(a, "samples"), std::to_string(a.samples));
    EXPECT_NEAR(a.accel, 32.0 * 32.0 / double(a.samples), 1e-5 * a.accel) << a.key() << " (6 digits)";
    // The sample count is the designed trajectory's.
    EXPECT_EQ(a.samples, make_trajectory(trajectory_options(c, a)).points()) << a.key();
    if (a.trajectory != "spiral") {
      EXPECT_EQ(a.samples, Index(a.readouts) * 32) << a.key();
      if (a.readouts == 8) {
        ++radial8;
        EXPECT_EQ(axis_value(a, "accel"), "4") << "same sample count as the Cartesian R 4";
      }
    } else {
      EXPECT_EQ(a.readouts, 4);
    }
  }
  EXPECT_EQ(cartesian, 2);
  EXPECT_EQ(radial8, 4);
}

TEST(StudyTrajectory, TrajectoryAloneRunsNoCartesianPattern) {
  const StudyConfig c = parse(
      "size = 32\n[[phantom]]\ntable = \"phantoms/qc-disk.toml\"\n[mri]\ntrajectory = \"radial\"\nspokes = 12\n"
      "[[method]]\nmethod = \"zero-filled\"\n");
  EXPECT_TRUE(c.mri->patterns.empty());
  const CaseGrid g = expand_grid(c);
  ASSERT_EQ(g.acquisitions.size(), 1u);
  EXPECT_EQ(g.acquisitions[0].samples, 12 * 64) << "default readout: 2 min(ny, nx)";
  EXPECT_EQ(g.acquisitions[0].key(), "mri/radial/12x64/c1/s0");
}

TEST(StudyTrajectory, RejectsBadKeysNamingThem) {
  const std::string zig = error_of(replaced(kMixed, "\"radial\", \"radial-golden\"", "\"zigzag\""));
  EXPECT_NE(zig.find("mri.trajectory"), std::string::npos) << zig;
  EXPECT_NE(zig.find("radial, radial-golden, spiral"), std::string::npos) << zig;
  const std::string zero = error_of(replaced(kMixed, "spokes = [8, 16]", "spokes = [8, 0]"));
  EXPECT_NE(zero.find("mri.spokes"), std::string::npos) << zero;
  EXPECT_NE(zero.find("1..100000"), std::string::npos) << zero;
  const std::string cartesian = error_of(
      "size = 32\n[[phantom]]\ntable = \"phantoms/qc-disk.toml\"\n[mri]\npattern = \"lines-vd\"\nspokes = 8\n"
      "[[method]]\nmethod = \"zero-filled\"\n");
  EXPECT_NE(cartesian.find("mri.spokes"), std::string::npos) << cartesian;
  EXPECT_NE(cartesian.find("Cartesian patterns only"), std::string::npos) << cartesian;
  const std::string no_spokes = error_of(replaced(kMixed, "spokes = [8, 16]", ""));
  EXPECT_NE(no_spokes.find("mri.spokes"), std::string::npos) << no_spokes;
  const std::string interleaves = error_of(replaced(kMixed, ", \"spiral\"]", "]"));
  EXPECT_NE(interleaves.find("mri.interleaves"), std::string::npos) << interleaves;
  const std::string no_pattern = error_of(replaced(kMixed, "pattern = \"lines-vd\"", ""));
  EXPECT_NE(no_pattern.find("mri.accel"), std::string::npos) << no_pattern;
  const std::string readout = error_of(replaced(kMixed, "readout = 32", "readout = [32, 64]"));
  EXPECT_NE(readout.find("mri.readout"), std::string::npos) << readout;
  const std::string twice = error_of(replaced(kMixed, "\"radial-golden\"", "\"radial\""));
  EXPECT_NE(twice.find("listed twice"), std::string::npos) << twice;
  EXPECT_EQ(error_of(kMixed), "");
}

TEST(StudyTrajectory, CasesSimulateAtThePointsLikeSimulateTrajectory) {
  const StudyConfig c = parse(kMixed);
  const CaseGrid g = expand_grid(c);
  const StudyCase* radial = nullptr;
  for (const StudyCase& k : g.cases)
    if (k.key == "qc-disk|mri/radial-golden/8x32/c2/s0|zero-filled|r0") radial = &k;
  ASSERT_NE(radial, nullptr);
  const Acquisition& a = g.acquisitions[size_t(radial->acquisition)];
  const CaseMeasurement cm = simulate_case_measurement(c, c.phantoms[0], a, radial->mask_seed, radial->noise_seed);
  const Measurement& m = cm.measurement;
  ASSERT_TRUE(m.mri && m.mri->non_cartesian());
  EXPECT_EQ(m.mri->trajectory->points(), 256);
  EXPECT_EQ(m.mri->kspace.shape, Shape({2, 256}));
  EXPECT_EQ(m.mri->pattern, "radial-golden");
  EXPECT_NEAR(m.mri->acceleration, 4.0, 1e-12);
  // The same samples as the direct simulation (the `simulate --trajectory` path) of the same object.
  const Phantom p = testing::load_repo_phantom("qc-disk");
  MriSimulationOptions so;
  so.coil_array.coils = 2;
  so.seed = radial->noise_seed;
  const Trajectory t = make_trajectory(trajectory_options(c, a));
  const Measurement direct =
      simulate_mri_trajectory_measurement(&p, rasterize(p, 32, 32), p.fov_mm / 32.0, t, so);
  ASSERT_EQ(direct.mri->kspace.data.size(), m.mri->kspace.data.size());
  double diff = 0.0, norm = 0.0;
  for (size_t j = 0; j < direct.mri->kspace.data.size(); ++j) {
    diff += std::norm(direct.mri->kspace.data[j] - m.mri->kspace.data[j]);
    norm += std::norm(direct.mri->kspace.data[j]);
  }
  EXPECT_GT(norm, 0.0);
  EXPECT_EQ(diff, 0.0);
  EXPECT_EQ(cm.truth.rows(), 32);

  // Gridding runs on it.
  const CaseOutcome zf = run_case_method(c.methods[0], cm, nullptr);
  EXPECT_TRUE(zf.ok) << zf.error;
  EXPECT_GT(zf.scores.psnr, 10.0);
}

}  // namespace
}  // namespace recofold
