// SPDX-License-Identifier: Apache-2.0
// ISMRMRD raw data: line placement by encoding counters, skipped and noise acquisitions,
// averages and slices, every refusal of the importer, and the export round trip.
#include <gtest/gtest.h>
#include <unistd.h>

#include <cmath>
#include <fstream>
#include <string>
#include <vector>

#include "recofold/core/error.h"
#include "recofold/io/ismrmrd_file.h"
#include "unit/ismrmrd_fixtures.h"
#include "test_dirs.h"

namespace recofold {
namespace {

using recofold_test::RawSpec;
using recofold_test::sample_value;
using recofold_test::write_raw;

std::string fresh_dir() { return recofold::testing::fresh_test_dir("recofold_io_ismrmrd"); }

// The InputError message of reading `path`, or "" when it reads.
std::string read_error(const std::string& path, const IsmrmrdSelection& sel = {}, std::string* field = nullptr) {
  try {
    read_ismrmrd_file(path, sel);
  } catch (const InputError& e) {
    if (field) *field = e.field();
    return e.what();
  }
  return "";
}

cfloat at(const RawCartesian& r, Index c, Index row, Index col) {
  return r.kspace.data[static_cast<size_t>((c * r.ey + row) * r.ex + col)];
}

TEST(IsmrmrdReader, PlacesShuffledLinesByTheirEncodingCounter) {
  const std::string path = fresh_dir() + "/raw.h5";
  RawSpec spec;
  write_raw(path, spec);
  ASSERT_TRUE(is_ismrmrd_file(path));
  const RawCartesian r = read_ismrmrd_file(path);
  EXPECT_EQ(r.coils, 4);
  EXPECT_EQ(r.ey, 16);
  EXPECT_EQ(r.ex, 16);
  EXPECT_EQ(r.readout_keep, 16);
  EXPECT_EQ(r.selected_lines, 16);
  EXPECT_EQ(r.trajectory, "cartesian");
  EXPECT_EQ(r.header_texts.at("system_vendor"), "test vendor");
  for (uint8_t s : r.sampled.data) EXPECT_EQ(s, 1);
  for (int c = 0; c < 4; ++c)
    for (int e1 = 0; e1 < 16; ++e1)
      for (int s = 0; s < 16; ++s) ASSERT_EQ(at(r, c, e1, s), sample_value(c, e1, s, 0, 0)) << c << " " << e1 << " " << s;
}

TEST(IsmrmrdReader, KeepsReadoutOversamplingForTheAssemblyAndSaysHowMuchToKeep) {
  const std::string path = fresh_dir() + "/raw.h5";
  RawSpec spec;
  spec.oversampling = 2;
  write_raw(path, spec);
  const RawCartesian r = read_ismrmrd_file(path);
  EXPECT_EQ(r.ex, 32);
  EXPECT_EQ(r.readout_keep, 16);
  EXPECT_DOUBLE_EQ(r.encoded_fov_mm[0], 64.0);
  EXPECT_DOUBLE_EQ(r.recon_fov_mm[0], 32.0);
  EXPECT_EQ(at(r, 2, 3, 31), sample_value(2, 3, 31, 0, 0));
}

TEST(IsmrmrdReader, SkipsNavigatorLinesAndCollectsTheNoiseCovariance) {
  const std::string path = fresh_dir() + "/raw.h5";
  RawSpec spec;
  spec.coils = 3;
  spec.navigators = 3;
  spec.noise_scans = 64;
  write_raw(path, spec);
  const RawCartesian r = read_ismrmrd_file(path);
  EXPECT_EQ(r.skipped.at("navigator"), 3);
  EXPECT_EQ(r.noise_acquisitions, 64);
  EXPECT_EQ(r.noise_samples, 64 * 16);
  EXPECT_DOUBLE_EQ(r.noise_dwell_us, 5.0);
  for (int c = 0; c < 3; ++c)
    for (int e1 = 0; e1 < 16; ++e1) ASSERT_EQ(at(r, c, e1, 7), sample_value(c, e1, 7, 0, 0));
  // Fixture noise: channel c = n_c + 0.5 n_{c-1}, complex variance 2 per n:
  // Σ_00 = 2, Σ_cc = 2.5 (c > 0), Σ_{c,c-1} = 1, others 0.
  ASSERT_EQ(r.noise_covariance.size(), 9u);
  const double expect[3][3] = {{2.0, 1.0, 0.0}, {1.0, 2.5, 1.0}, {0.0, 1.0, 2.5}};
  for (int a = 0; a < 3; ++a)
    for (int b = 0; b < 3; ++b)
      EXPECT_NEAR(std::abs(r.noise_covariance[static_cast<size_t>(a * 3 + b)] - cdouble(expect[a][b], 0)), 0.0, 0.15)
          << a << "," << b;
}

TEST(IsmrmrdReader, AveragesRepeatedLinesOrKeepsOneAverage) {
  const std::string path = fresh_dir() + "/raw.h5";
  RawSpec spec;
  spec.averages = 2;
  write_raw(path, spec);
  const RawCartesian mean = read_ismrmrd_file(path);
  EXPECT_EQ(mean.averages_used, 2);
  EXPECT_EQ(mean.selected_lines, 32);
  const cfloat want = (sample_value(1, 4, 5, 0, 0) + sample_value(1, 4, 5, 0, 1)) * 0.5f;
  EXPECT_NEAR(std::abs(at(mean, 1, 4, 5) - want), 0.0, 1e-6);
  IsmrmrdSelection one;
  one.average = 1;
  const RawCartesian second = read_ismrmrd_file(path, one);
  EXPECT_EQ(second.averages_used, 1);
  EXPECT_EQ(at(second, 1, 4, 5), sample_value(1, 4, 5, 0, 1));
  EXPECT_EQ(second.skipped.at("other average"), 16);
  one.average = 4;
  std::string field;
  const std::string err = read_error(path, one, &field);
  EXPECT_EQ(field, "average");
  EXPECT_NE(err.find("average 4 is out of range"), std::string::npos) << err;
}

TEST(IsmrmrdReader, SelectsASliceAndNamesOneOutOfRange) {
  const std::string path = fresh_dir() + "/raw.h5";
  RawSpec spec;
  spec.slices = 3;
  write_raw(path, spec);
  IsmrmrdSelection sel;
  sel.slice = 2;
  const RawCartesian r = read_ismrmrd_file(path, sel);
  EXPECT_EQ(at(r, 0, 9, 2), sample_value(0, 9, 2, 2, 0));
  EXPECT_EQ(r.skipped.at("other slice"), 32);
  EXPECT_EQ(r.counter_max.at("slice"), 2);
  sel.slice = 5;
  std::string field;
  const std::string err = read_error(path, sel, &field);
  EXPECT_EQ(field, "slice");
  EXPECT_NE(err.find("slice 5 is out of range: the file has slice 0..2"), std::string::npos) << err;
}

TEST(IsmrmrdReader, RejectsAFileWithoutHeader) {
  const std::string path = fresh_dir() + "/raw.h5";
  RawSpec spec;
  spec.write_header = false;
  write_raw(path, spec);
  EXPECT_FALSE(is_ismrmrd_file(path));
  const std::string err = read_error(path);
  EXPECT_NE(err.find("no ISMRMRD header"), std::string::npos) << err;
  EXPECT_NE(err.find(path), std::string::npos) << err;
}

TEST(IsmrmrdReader, RejectsZeroAcquisitions) {
  const std::string path = fresh_dir() + "/raw.h5";
  RawSpec spec;
  spec.write_lines = false;
  write_raw(path, spec);
  const std::string err = read_error(path);
  EXPECT_NE(err.find("no acquisitions"), std::string::npos) << err;
}

TEST(IsmrmrdReader, RejectsEncodingLimitsThatDoNotFitTheMatrix) {
  const std::string dir = fresh_dir();
  RawSpec wide;
  wide.limit_max = 20;  // 21 lines in a 16-line matrix
  write_raw(dir + "/wide.h5", wide);
  std::string err = read_error(dir + "/wide.h5");
  EXPECT_NE(err.find("inconsistent encoding limits"), std::string::npos) << err;
  EXPECT_NE(err.find("kspace_encoding_step_1"), std::string::npos) << err;
  RawSpec shifted;
  shifted.center_line = 3;  // lines 0..15 around centre 3 would reach row 20
  write_raw(dir + "/shifted.h5", shifted);
  err = read_error(dir + "/shifted.h5");
  EXPECT_NE(err.find("inconsistent encoding limits"), std::string::npos) << err;
  RawSpec narrow;
  narrow.limit_max = 9;  // lines 10..15 lie outside the stated limits
  write_raw(dir + "/narrow.h5", narrow);
  err = read_error(dir + "/narrow.h5");
  EXPECT_NE(err.find("outside the encoding limits"), std::string::npos) << err;
}

TEST(IsmrmrdReader, RejectsMixedCoilCounts) {
  const std::string path = fresh_dir() + "/raw.h5";
  RawSpec spec;
  spec.coils_of_line5 = 2;
  write_raw(path, spec);
  const std::string err = read_error(path);
  EXPECT_NE(err.find("mixed coil counts"), std::string::npos) << err;
  EXPECT_NE(err.find("2 active channels"), std::string::npos) << err;
}

TEST(IsmrmrdReader, RefusesNonCartesianEpiAnd3dDataSayingWhy) {
  const std::string dir = fresh_dir();
  RawSpec radial;
  radial.trajectory = ISMRMRD::TrajectoryType::RADIAL;
  write_raw(dir + "/radial.h5", radial);
  std::string err = read_error(dir + "/radial.h5");
  EXPECT_NE(err.find("non-Cartesian"), std::string::npos) << err;
  EXPECT_NE(err.find("'radial'"), std::string::npos) << err;
  RawSpec epi;
  epi.trajectory = ISMRMRD::TrajectoryType::EPI;
  write_raw(dir + "/epi.h5", epi);
  err = read_error(dir + "/epi.h5");
  EXPECT_NE(err.find("EPI"), std::string::npos) << err;
  RawSpec vol;
  vol.matrix_z = 4;
  write_raw(dir + "/vol.h5", vol);
  err = read_error(dir + "/vol.h5");
  EXPECT_NE(err.find("3-D encoding"), std::string::npos) << err;
}

TEST(IsmrmrdReader, RejectsMissingAndNonHdf5Files) {
  const std::string dir = fresh_dir();
  EXPECT_NE(read_error(dir + "/absent.h5").find("does not exist"), std::string::npos);
  std::ofstream(dir + "/text.h5") << "not hdf5\n";
  EXPECT_FALSE(is_ismrmrd_file(dir + "/text.h5"));
  EXPECT_FALSE(read_error(dir + "/text.h5").empty());
}

TEST(IsmrmrdWriter, RoundTripGivesTheSameKspaceMaskAndNoiseLevel) {
  const std::string dir = fresh_dir();
  Measurement m;
  m.modality = Modality::kMri;
  m.ny = 12;
  m.nx = 10;
  m.pixel_spacing_mm[0] = 1.5;
  m.pixel_spacing_mm[1] = 0.75;
  MriData d;
  d.kspace = NdArray<cfloat>(Shape{3, 12, 10});
  d.mask = NdArray<uint8_t>(Shape{12, 10});
  d.noise_sigma = 0.125;
  for (Index r = 0; r < 12; ++r) {
    const bool take = (r % 3 != 1) || r == 6;
    for (Index c = 0; c < 10; ++c) d.mask.data[static_cast<size_t>(r * 10 + c)] = take ? 1 : 0;
    for (Index coil = 0; coil < 3 && take; ++coil)
      for (Index c = 0; c < 10; ++c)
        d.kspace.data[static_cast<size_t>((coil * 12 + r) * 10 + c)] = sample_value(static_cast<int>(coil), static_cast<int>(r), static_cast<int>(c), 0, 0);
  }
  m.mri = d;
  write_ismrmrd_file(dir + "/out.h5", m, "meas.h5");
  const RawCartesian r = read_ismrmrd_file(dir + "/out.h5");
  EXPECT_EQ(r.coils, 3);
  EXPECT_EQ(r.ey, 12);
  EXPECT_EQ(r.ex, 10);
  EXPECT_EQ(r.readout_keep, 10);
  EXPECT_EQ(r.kspace.data, d.kspace.data);
  EXPECT_EQ(r.sampled.data, d.mask.data);
  ASSERT_TRUE(r.header_noise_sigma.has_value());
  EXPECT_DOUBLE_EQ(*r.header_noise_sigma, 0.125);
  EXPECT_NEAR(r.encoded_fov_mm[0], 7.5, 1e-5);
  EXPECT_NEAR(r.encoded_fov_mm[1], 18.0, 1e-5);
}

TEST(IsmrmrdWriter, RefusesMasksOfSinglePointsAndLeavesNoFile) {
  const std::string dir = fresh_dir();
  Measurement m;
  m.modality = Modality::kMri;
  m.ny = m.nx = 8;
  MriData d;
  d.kspace = NdArray<cfloat>(Shape{1, 8, 8});
  d.mask = NdArray<uint8_t>(Shape{8, 8}, 1);
  d.mask.data[3 * 8 + 5] = 0;
  m.mri = d;
  try {
    write_ismrmrd_file(dir + "/out.h5", m, "meas.h5");
    FAIL() << "a point mask was exported";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "/mri/mask");
    EXPECT_NE(std::string(e.what()).find("row 3 samples 7 of 8"), std::string::npos) << e.what();
  }
  EXPECT_FALSE(std::ifstream(dir + "/out.h5").good());
}

}  // namespace
}  // namespace recofold
