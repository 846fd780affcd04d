// SPDX-License-Identifier: Apache-2.0
// The trajectory file: round trip of every field, and readable errors for inconsistent files.
#include <gtest/gtest.h>
#include <unistd.h>

#include <cmath>
#include <string>
#include <vector>

#include "recofold/core/error.h"
#include "recofold/io/h5_file.h"
#include "recofold/io/trajectory_file.h"
#include "test_dirs.h"

namespace recofold {
namespace {

std::string fresh_dir() { return recofold::testing::fresh_test_dir("recofold_io_traj"); }

Trajectory sample_trajectory() {
  Trajectory t;
  t.kind = TrajectoryKind::kSpiral;
  t.ny = 32;
  t.nx = 24;
  t.fov_mm = 200.0;
  t.kx.resize(6);
  t.ky.resize(6);
  t.kx << 0.0, 1.5, -12.0, 3.25, 0.5, -0.75;
  t.ky << 0.0, -2.0, 16.0, 4.0, -16.0, 1.0;
  t.dcf = {0.1f, 0.2f, 0.3f, 0.4f, 0.5f, 0.6f};
  t.dcf_method = "pipe-menon";
  t.readouts = 2;
  t.samples_per_readout = 3;
  t.readout_angles_rad = {0.0, 3.14159};
  t.sample_time_us = {0.0, 2.0, 4.0};
  t.gradient_mT_per_m = NdArray<float>(Shape{2, 2});
  t.gradient_mT_per_m.data = {1.0f, 2.0f, -3.0f, 4.0f};
  t.numbers["peak_slew_T_per_m_per_s"] = 149.5;
  t.texts["note"] = "designed";
  return t;
}

TEST(TrajectoryFile, RoundTripsEveryField) {
  const std::string path = fresh_dir() + "/t.h5";
  const Trajectory t = sample_trajectory();
  write_trajectory_file(path, t, Provenance{});
  const Trajectory r = read_trajectory_file(path);
  EXPECT_EQ(r.kind, TrajectoryKind::kSpiral);
  EXPECT_EQ(r.ny, 32);
  EXPECT_EQ(r.nx, 24);
  EXPECT_DOUBLE_EQ(r.fov_mm, 200.0);
  for (Index j = 0; j < 6; ++j) {
    EXPECT_FLOAT_EQ(static_cast<float>(r.kx[j]), static_cast<float>(t.kx[j]));
    EXPECT_FLOAT_EQ(static_cast<float>(r.ky[j]), static_cast<float>(t.ky[j]));
  }
  EXPECT_EQ(r.dcf, t.dcf);
  EXPECT_EQ(r.dcf_method, "pipe-menon");
  EXPECT_EQ(r.readouts, 2);
  EXPECT_EQ(r.samples_per_readout, 3);
  EXPECT_EQ(r.readout_angles_rad, t.readout_angles_rad);
  EXPECT_EQ(r.sample_time_us, t.sample_time_us);
  EXPECT_EQ(r.gradient_mT_per_m.data, t.gradient_mT_per_m.data);
  EXPECT_DOUBLE_EQ(r.numbers.at("peak_slew_T_per_m_per_s"), 149.5);
  EXPECT_EQ(r.texts.at("note"), "designed");
}

TEST(TrajectoryFile, RejectsAGridOtherThanTheFilesAndPointsOutsideAGivenGrid) {
  const std::string dir = fresh_dir();
  const std::string path = dir + "/t.h5";
  write_trajectory_file(path, sample_trajectory(), Provenance{});
  try {
    read_trajectory_file(path, 64, 64);
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), path);
    EXPECT_EQ(e.field(), "/trajectory");
  }
  // A user file without image_shape, read for a grid too small for its points.
  const std::string user = dir + "/u.h5";
  {
    H5Writer w(user);
    NdArray<float> k(Shape{2, 2});
    k.data = {0.0f, 0.0f, 9.0f, 1.0f};
    w.write("/trajectory/k", k);
    w.commit();
  }
  EXPECT_EQ(read_trajectory_file(user, 32, 32).points(), 2);
  try {
    read_trajectory_file(user, 16, 16);
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "/trajectory/k");
    EXPECT_NE(std::string(e.what()).find("point 1"), std::string::npos) << e.what();
  }
}

TEST(TrajectoryFile, RejectsReadoutCountsThatDoNotMultiplyToThePoints) {
  const std::string path = fresh_dir() + "/t.h5";
  Trajectory t = sample_trajectory();
  t.samples_per_readout = 4;
  write_trajectory_file(path, t, Provenance{});
  EXPECT_THROW(read_trajectory_file(path), InputError);
}

}  // namespace
}  // namespace recofold
