// SPDX-License-Identifier: Apache-2.0
// Non-Cartesian measurement files: the /mri/trajectory round trip and the refusals of inconsistent files.
#include <gtest/gtest.h>
#include <unistd.h>

#include <cmath>
#include <functional>
#include <limits>
#include <string>
#include <vector>

#include "recofold/core/error.h"
#include "recofold/io/h5_file.h"
#include "recofold/io/measurement_file.h"
#include "recofold/io/trajectory_file.h"
#include "test_dirs.h"

namespace recofold {
namespace {

std::string fresh_dir() { return recofold::testing::fresh_test_dir("recofold_io_meas_traj"); }

constexpr Index kNy = 16, kNx = 12, kCoils = 2, kPoints = 6;

Trajectory small_trajectory() {
  Trajectory t;
  t.kind = TrajectoryKind::kRadialGolden;
  t.ny = kNy;
  t.nx = kNx;
  t.kx.resize(kPoints);
  t.ky.resize(kPoints);
  t.kx << -6.0, 0.0, 5.5, -1.25, 0.0, 2.0;
  t.ky << 0.0, 0.0, 0.0, -8.0, 0.0, 7.5;
  t.dcf = {1.5f, 0.1f, 1.4f, 1.3f, 0.1f, 1.2f};
  t.dcf_method = "ramp";
  t.readouts = 2;
  t.samples_per_readout = 3;
  t.readout_angles_rad = {0.0, 1.9416};
  t.positions = {-6.0, 0.0, 5.5};
  t.numbers["angle_step_deg"] = 111.246;
  return t;
}

Measurement small_measurement() {
  Measurement m;
  m.modality = Modality::kMri;
  m.ny = kNy;
  m.nx = kNx;
  MriData d;
  d.kspace = NdArray<cfloat>(Shape{kCoils, kPoints});
  for (Index i = 0; i < d.kspace.size(); ++i)
    d.kspace.data[static_cast<size_t>(i)] = cfloat(0.5f * static_cast<float>(i), -0.25f * static_cast<float>(i));
  d.coil_maps = NdArray<cfloat>(Shape{kCoils, kNy, kNx}, cfloat(0.7f, 0.1f));
  d.noise_sigma = 0.02;
  d.pattern = "radial-golden";
  d.acceleration = static_cast<double>(kNy * kNx) / kPoints;
  d.trajectory = small_trajectory();
  d.texts["kspace_source"] = "test";
  m.mri = std::move(d);
  return m;
}

TEST(MeasurementFileTrajectory, RoundTripsTheTrajectoryAndTheSamples) {
  const std::string path = fresh_dir() + "/m.h5";
  const Measurement m = small_measurement();
  write_measurement_file(path, m);
  {
    const H5Reader r(path);
    EXPECT_FALSE(r.has("/mri/mask"));
    EXPECT_TRUE(r.has("/mri/trajectory/k"));
    EXPECT_EQ(r.shape("/mri/kspace"), (Shape{kCoils, kPoints}));
  }
  const Measurement back = read_measurement_file(path);
  ASSERT_TRUE(back.mri.has_value());
  const MriData& d = *back.mri;
  ASSERT_TRUE(d.non_cartesian());
  EXPECT_EQ(d.mask.size(), 0);
  EXPECT_EQ(d.sample_count(), kPoints);
  EXPECT_EQ(d.kspace.shape, (Shape{kCoils, kPoints}));
  EXPECT_EQ(d.kspace.data, m.mri->kspace.data);
  const Trajectory& t = *d.trajectory;
  const Trajectory& s = *m.mri->trajectory;
  EXPECT_EQ(t.kind, TrajectoryKind::kRadialGolden);
  EXPECT_EQ(t.ny, kNy);
  EXPECT_EQ(t.nx, kNx);
  for (Index j = 0; j < kPoints; ++j) {
    EXPECT_DOUBLE_EQ(t.kx[j], s.kx[j]);
    EXPECT_DOUBLE_EQ(t.ky[j], s.ky[j]);
  }
  EXPECT_EQ(t.dcf, s.dcf);
  EXPECT_EQ(t.dcf_method, "ramp");
  EXPECT_EQ(t.readouts, 2);
  EXPECT_EQ(t.samples_per_readout, 3);
  EXPECT_EQ(t.readout_angles_rad, s.readout_angles_rad);
  EXPECT_DOUBLE_EQ(t.numbers.at("angle_step_deg"), 111.246);
  EXPECT_EQ(d.pattern, "radial-golden");
  EXPECT_DOUBLE_EQ(d.noise_sigma, 0.02);
  EXPECT_EQ(d.texts.at("kspace_source"), "test");
}

TEST(MeasurementFileTrajectory, WritingSamplesThatDoNotMatchThePointsIsAWorkError) {
  const std::string path = fresh_dir() + "/m.h5";
  Measurement m = small_measurement();
  m.mri->kspace = NdArray<cfloat>(Shape{kCoils, kPoints + 1});
  EXPECT_THROW(write_measurement_file(path, m), WorkError);
  m = small_measurement();
  m.mri->trajectory->dcf.pop_back();
  EXPECT_THROW(write_measurement_file(path, m), WorkError);
  EXPECT_NE(::access(path.c_str(), F_OK), 0) << "nothing is written";
}

// A hand-made non-Cartesian file; `edit` changes the pieces before they are written.
struct RawPieces {
  NdArray<float> k{Shape{kPoints, 2}};
  NdArray<float> dcf{Shape{kPoints}, 1.0f};
  NdArray<cfloat> kspace{Shape{kCoils, kPoints}, cfloat(1.0f, 0.0f)};
  bool with_dcf = true, with_mask = false;
};

std::string write_raw(const std::string& dir, const std::string& name, const std::function<void(RawPieces&)>& edit) {
  RawPieces p;
  const Trajectory t = small_trajectory();
  for (Index j = 0; j < kPoints; ++j) {
    p.k.data[static_cast<size_t>(2 * j)] = static_cast<float>(t.kx[j]);
    p.k.data[static_cast<size_t>(2 * j + 1)] = static_cast<float>(t.ky[j]);
  }
  edit(p);
  const std::string path = dir + "/" + name + ".h5";
  H5Writer w(path);
  w.write_attr("/", "modality", std::string("mri"));
  w.write_attr("/", "image_shape", std::vector<int64_t>{kNy, kNx});
  w.write("/mri/kspace", p.kspace);
  w.write("/mri/coil_maps", NdArray<cfloat>(Shape{kCoils, kNy, kNx}, cfloat(1.0f, 0.0f)));
  if (p.with_mask) w.write("/mri/mask", NdArray<uint8_t>(Shape{kNy, kNx}, 1));
  w.write_attr("/mri", "noise_sigma", 0.01);
  w.write("/mri/trajectory/k", p.k);
  if (p.with_dcf) w.write("/mri/trajectory/dcf", p.dcf);
  w.write_attr("/mri/trajectory", "kind", std::string("file"));
  w.commit();
  return path;
}

void expect_refused(const std::string& path, const std::string& field, const std::string& words) {
  try {
    read_measurement_file(path);
    FAIL() << "expected InputError for " << path;
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), path);
    EXPECT_EQ(e.field(), field) << e.what();
    EXPECT_NE(std::string(e.what()).find(words), std::string::npos) << e.what();
  }
}

TEST(MeasurementFileTrajectory, AHandMadeFileIsReadAndEachInconsistencyIsNamed) {
  const std::string dir = fresh_dir();
  const Measurement good = read_measurement_file(write_raw(dir, "good", [](RawPieces&) {}));
  ASSERT_TRUE(good.mri && good.mri->non_cartesian());
  EXPECT_EQ(good.mri->trajectory->points(), kPoints);

  // kx = 6.5 > nx/2 = 6: outside ±0.5 cycles per pixel.
  expect_refused(write_raw(dir, "outside", [](RawPieces& p) { p.k.data[4] = 6.5f; }), "/mri/trajectory/k",
                 "point 2");
  expect_refused(write_raw(dir, "nan",
                           [](RawPieces& p) { p.k.data[3] = std::numeric_limits<float>::quiet_NaN(); }),
                 "/mri/trajectory/k", "finite");
  expect_refused(write_raw(dir, "dcf_length", [](RawPieces& p) { p.dcf = NdArray<float>(Shape{kPoints - 1}, 1.0f); }),
                 "/mri/trajectory/dcf", "expected [6]");
  expect_refused(write_raw(dir, "no_dcf", [](RawPieces& p) { p.with_dcf = false; }), "/mri/trajectory/dcf",
                 "missing");
  expect_refused(write_raw(dir, "kspace_grid",
                           [](RawPieces& p) { p.kspace = NdArray<cfloat>(Shape{kCoils, kNy, kNx}); }),
                 "/mri/kspace", "expected [coils >= 1, 6]");
  expect_refused(write_raw(dir, "kspace_length",
                           [](RawPieces& p) { p.kspace = NdArray<cfloat>(Shape{kCoils, kPoints + 2}); }),
                 "/mri/kspace", "expected [coils >= 1, 6]");
  expect_refused(write_raw(dir, "mask", [](RawPieces& p) { p.with_mask = true; }), "/mri/mask", "non-Cartesian");
}

}  // namespace
}  // namespace recofold
