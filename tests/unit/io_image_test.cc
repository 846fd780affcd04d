// SPDX-License-Identifier: Apache-2.0
// Image files, measurement files and ITK export/import: round trips and rejected inputs.
#include <dirent.h>
#include <gtest/gtest.h>
#include <unistd.h>

#include <cmath>
#include <functional>
#include <limits>
#include <string>
#include <vector>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/io/h5_file.h"
#include "recofold/io/image_export.h"
#include "recofold/io/image_file.h"
#include "recofold/io/measurement_file.h"
#include "test_dirs.h"

namespace recofold {
namespace {

std::string fresh_dir() { return recofold::testing::fresh_test_dir("recofold_io_image"); }

std::vector<std::string> list_dir(const std::string& dir) {
  std::vector<std::string> names;
  DIR* d = ::opendir(dir.c_str());
  if (!d) return names;
  while (dirent* e = ::readdir(d)) {
    const std::string n = e->d_name;
    if (n != "." && n != "..") names.push_back(n);
  }
  ::closedir(d);
  return names;
}

ImageRecord ramp_record(Index ny, Index nx, bool complex) {
  ImageRecord rec;
  rec.pixels = NdArray<cfloat>(Shape{ny, nx});
  for (Index y = 0; y < ny; ++y)
    for (Index x = 0; x < nx; ++x)
      rec.pixels.data[static_cast<size_t>(y * nx + x)] =
          cfloat(0.25f * y + 0.01f * x, complex ? 0.5f * x - 0.1f * y : 0.f);
  rec.is_complex = complex;
  rec.pixel_spacing_mm[0] = 0.8;
  rec.pixel_spacing_mm[1] = 1.25;
  rec.description = "ramp";
  return rec;
}

// Runs `fn` and checks it throws InputError naming `file` and `field`.
void expect_input_error(const std::function<void()>& fn, const std::string& file, const std::string& field,
                        const std::string& words) {
  try {
    fn();
    FAIL() << "expected InputError for " << file << " " << field;
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), file) << e.what();
    EXPECT_EQ(e.field(), field) << e.what();
    EXPECT_NE(e.reason().find(words), std::string::npos) << e.what();
  }
}

TEST(ImageFile, RoundTripsRealComplexStacksAttributesTablesAndProvenance) {
  const std::string dir = fresh_dir();
  ImageRecord rec = ramp_record(5, 7, true);
  rec.text_attrs["units"] = "a.u.";
  rec.number_attrs["fov_mm"] = 120.0;
  Table t;
  t.columns = {"type", "intensity"};
  t.rows = NdArray<double>(Shape{2, 2});
  t.rows.data = {0, 1.0, 1, -0.8};
  t.number_attrs["fov_mm"] = 256;
  t.text_attrs["name"] = "test";
  rec.tables["/phantom/components"] = t;
  Provenance prov;
  prov.command = "recofold test";
  prov.extra["seed"] = "42";
  write_image_file(dir + "/c.h5", rec, prov);
  const ImageRecord back = read_image_file(dir + "/c.h5");
  EXPECT_TRUE(back.is_complex);
  EXPECT_EQ(back.pixels.shape, (Shape{5, 7}));
  EXPECT_EQ(back.pixels.data, rec.pixels.data);
  EXPECT_DOUBLE_EQ(back.pixel_spacing_mm[0], 0.8);
  EXPECT_DOUBLE_EQ(back.pixel_spacing_mm[1], 1.25);
  EXPECT_EQ(back.description, "ramp");
  EXPECT_EQ(back.text_attrs.at("units"), "a.u.");
  EXPECT_DOUBLE_EQ(back.number_attrs.at("fov_mm"), 120.0);
  ASSERT_EQ(back.tables.count("/phantom/components"), 1u);
  const Table& bt = back.tables.at("/phantom/components");
  EXPECT_EQ(bt.columns, t.columns);
  EXPECT_EQ(bt.rows.data, t.rows.data);
  EXPECT_DOUBLE_EQ(bt.number_attrs.at("fov_mm"), 256);
  EXPECT_EQ(bt.text_attrs.at("name"), "test");
  const Provenance p = read_provenance(dir + "/c.h5");
  EXPECT_EQ(p.command, "recofold test");
  EXPECT_EQ(p.extra.at("seed"), "42");
  EXPECT_EQ(p.producer, prov.producer);

  // Real records are stored as float32 and read back without imaginary parts.
  ImageRecord stack;
  stack.pixels = NdArray<cfloat>(Shape{3, 4, 4}, cfloat(2.f, 9.f));
  write_image_file(dir + "/s.h5", stack, prov);
  H5Reader r(dir + "/s.h5");
  EXPECT_EQ(r.type_name("/image"), "float32");
  EXPECT_EQ(r.attr_int("/image", "research_use_only"), 1);
  const ImageRecord sb = read_image_file(dir + "/s.h5");
  EXPECT_FALSE(sb.is_complex);
  EXPECT_EQ(sb.pixels.shape, (Shape{3, 4, 4}));
  EXPECT_EQ(sb.pixels.data[5], cfloat(2.f, 0.f));
}

TEST(ImageFileReader, RejectsMissingFileNotHdf5MissingImageWrongRankNanAndWrongType) {
  const std::string dir = fresh_dir();
  expect_input_error([&] { read_image_file(dir + "/missing.h5"); }, dir + "/missing.h5", "", "not found");
  write_text_atomic(dir + "/text.h5", "plain text");
  expect_input_error([&] { read_image_file(dir + "/text.h5"); }, dir + "/text.h5", "", "not an HDF5");
  {
    H5Writer w(dir + "/noimage.h5");
    w.write("/other", NdArray<float>(Shape{4, 4}));
    w.commit();
  }
  expect_input_error([&] { read_image_file(dir + "/noimage.h5"); }, dir + "/noimage.h5", "/image", "missing");
  {
    H5Writer w(dir + "/rank1.h5");
    w.write("/image", NdArray<float>(Shape{16}));
    w.commit();
  }
  expect_input_error([&] { read_image_file(dir + "/rank1.h5"); }, dir + "/rank1.h5", "/image", "rank 1");
  {
    NdArray<float> a(Shape{4, 4}, 1.f);
    a.data[6] = std::numeric_limits<float>::quiet_NaN();
    H5Writer w(dir + "/nan.h5");
    w.write("/image", a);
    w.commit();
  }
  expect_input_error([&] { read_image_file(dir + "/nan.h5"); }, dir + "/nan.h5", "/image", "index 6");
  {
    H5Writer w(dir + "/group.h5");
    w.write_attr("/image", "x", 1.0);  // /image is a group here
    w.commit();
  }
  expect_input_error([&] { read_image_file(dir + "/group.h5"); }, dir + "/group.h5", "/image", "not a dataset");
}

Measurement small_mri() {
  Measurement m;
  m.modality = Modality::kMri;
  m.ny = 4;
  m.nx = 6;
  MriData d;
  d.kspace = NdArray<cfloat>(Shape{2, 4, 6}, cfloat(1, -1));
  d.mask = NdArray<uint8_t>(Shape{4, 6}, 1);
  d.mask.data[3] = 0;
  d.coil_maps = NdArray<cfloat>(Shape{2, 4, 6}, cfloat(0.5f, 0.5f));
  d.noise_sigma = 0.01;
  d.pattern = "lines-uniform";
  d.acceleration = 1.04;
  d.numbers["center_fraction"] = 0.08;
  d.texts["seed_note"] = "7";
  m.mri = d;
  m.truth = NdArray<cfloat>(Shape{4, 6}, cfloat(3, 0));
  m.truth_kind = "analytic";
  m.provenance.command = "simulate";
  return m;
}

TEST(MeasurementFile, RoundTripsMriAndCt) {
  const std::string dir = fresh_dir();
  const Measurement m = small_mri();
  write_measurement_file(dir + "/mri.h5", m);
  const Measurement b = read_measurement_file(dir + "/mri.h5");
  EXPECT_EQ(b.modality, Modality::kMri);
  EXPECT_EQ(b.ny, 4);
  EXPECT_EQ(b.nx, 6);
  ASSERT_TRUE(b.mri.has_value());
  EXPECT_EQ(b.mri->kspace.data, m.mri->kspace.data);
  EXPECT_EQ(b.mri->mask.data, m.mri->mask.data);
  EXPECT_EQ(b.mri->coil_maps.data, m.mri->coil_maps.data);
  EXPECT_DOUBLE_EQ(b.mri->noise_sigma, 0.01);
  EXPECT_EQ(b.mri->pattern, "lines-uniform");
  EXPECT_DOUBLE_EQ(b.mri->numbers.at("center_fraction"), 0.08);
  EXPECT_EQ(b.mri->texts.at("seed_note"), "7");
  ASSERT_TRUE(b.truth.has_value());
  EXPECT_FALSE(b.truth_is_complex);
  EXPECT_EQ(b.truth->data, m.truth->data);
  EXPECT_EQ(b.truth_kind, "analytic");
  EXPECT_EQ(b.provenance.command, "simulate");

  Measurement ct;
  ct.modality = Modality::kCt;
  ct.ny = ct.nx = 8;
  CtData c;
  c.sinogram = NdArray<float>(Shape{3, 11}, 0.5f);
  c.angles_rad = {0.0, 1.0, 2.0};
  c.beam = CtBeam::kFan;
  c.detector_shape = FanDetector::kEquiangular;
  c.detector_count = 11;
  c.source_to_isocenter_mm = 100;
  c.source_to_detector_mm = 200;
  c.photons_per_ray = 1e4;
  ct.ct = c;
  write_measurement_file(dir + "/ct.h5", ct);
  const Measurement cb = read_measurement_file(dir + "/ct.h5");
  ASSERT_TRUE(cb.ct.has_value());
  EXPECT_EQ(cb.ct->sinogram.data, c.sinogram.data);
  EXPECT_EQ(cb.ct->angles_rad, c.angles_rad);
  EXPECT_EQ(cb.ct->beam, CtBeam::kFan);
  EXPECT_EQ(cb.ct->detector_shape, FanDetector::kEquiangular);
  EXPECT_DOUBLE_EQ(cb.ct->photons_per_ray, 1e4);
  EXPECT_FALSE(cb.truth.has_value());
}

TEST(MeasurementReader, RejectsMaskValuesShapeMismatchesAndNan) {
  const std::string dir = fresh_dir();
  Measurement m = small_mri();
  m.mri->mask.data[0] = 2;
  write_measurement_file(dir + "/mask2.h5", m);
  expect_input_error([&] { read_measurement_file(dir + "/mask2.h5"); }, dir + "/mask2.h5", "/mri/mask", "only 0 and 1");

  m = small_mri();
  m.mri->coil_maps = NdArray<cfloat>(Shape{3, 4, 6});
  write_measurement_file(dir + "/maps.h5", m);
  expect_input_error([&] { read_measurement_file(dir + "/maps.h5"); }, dir + "/maps.h5", "/mri/coil_maps",
                     "[3, 4, 6]");

  m = small_mri();
  m.ny = 5;  // image_shape disagrees with the k-space
  write_measurement_file(dir + "/shape.h5", m);
  expect_input_error([&] { read_measurement_file(dir + "/shape.h5"); }, dir + "/shape.h5", "/mri/kspace",
                     "image_shape");

  m = small_mri();
  m.mri->kspace.data[5] = cfloat(std::numeric_limits<float>::quiet_NaN(), 0);
  write_measurement_file(dir + "/nan.h5", m);
  expect_input_error([&] { read_measurement_file(dir + "/nan.h5"); }, dir + "/nan.h5", "/mri/kspace", "non-finite");

  m = small_mri();
  m.truth = NdArray<cfloat>(Shape{6, 4});
  write_measurement_file(dir + "/truth.h5", m);
  expect_input_error([&] { read_measurement_file(dir + "/truth.h5"); }, dir + "/truth.h5", "/truth/image", "[6, 4]");

  {
    H5Writer w(dir + "/nomod.h5");
    w.write_attr("/", "image_shape", std::vector<int64_t>{4, 4});
    w.commit();
  }
  expect_input_error([&] { read_measurement_file(dir + "/nomod.h5"); }, dir + "/nomod.h5", "/", "modality");
}

TEST(ImageExport, RoundTripsThroughNiftiMetaImageAndNrrdWithSpacing) {
  const std::string dir = fresh_dir();
  const ImageRecord rec = ramp_record(6, 9, false);
  for (const std::string ext : {".nii.gz", ".nii", ".mha", ".nrrd"}) {
    const std::string path = dir + "/img" + ext;
    write_image_any(path, rec, Provenance{}, PngWindow{});
    const ImageRecord back = read_image_any(path);
    EXPECT_EQ(back.pixels.shape, (Shape{6, 9})) << ext;
    EXPECT_EQ(back.pixels.data, rec.pixels.data) << ext;
    EXPECT_NEAR(back.pixel_spacing_mm[0], 0.8, 1e-6) << ext;
    EXPECT_NEAR(back.pixel_spacing_mm[1], 1.25, 1e-6) << ext;
  }
  // A stack becomes a volume and comes back as a stack.
  ImageRecord stack;
  stack.pixels = NdArray<cfloat>(Shape{2, 3, 4});
  for (Index i = 0; i < stack.pixels.size(); ++i) stack.pixels.data[static_cast<size_t>(i)] = cfloat(i, 0);
  write_image_any(dir + "/stack.mha", stack, Provenance{}, PngWindow{});
  EXPECT_EQ(read_image_any(dir + "/stack.mha").pixels.data, stack.pixels.data);
  // Complex → magnitude.
  const ImageRecord c = ramp_record(4, 4, true);
  write_image_any(dir + "/mag.nrrd", c, Provenance{}, PngWindow{});
  const ImageRecord mb = read_image_any(dir + "/mag.nrrd");
  EXPECT_FLOAT_EQ(mb.pixels.data[7].real(), std::abs(c.pixels.data[7]));
  // Only finished files, no temporaries.
  for (const auto& n : list_dir(dir)) EXPECT_NE(n[0], '.') << n;
}

TEST(WritePng, MapsTheWindowToGreyLevelsWithRowZeroOnTop) {
  const std::string dir = fresh_dir();
  ImageF img(3, 4);
  img << 0, 1, 2, 3,  //
      4, 5, 6, 7,     //
      8, 9, 10, 11;
  write_png(dir + "/auto.png", img, PngWindow{});
  const ImageRecord a = read_image_any(dir + "/auto.png");
  EXPECT_EQ(a.pixels.shape, (Shape{3, 4}));
  EXPECT_FLOAT_EQ(a.pixels.data[0].real(), 0.f);
  EXPECT_FLOAT_EQ(a.pixels.data[11].real(), 255.f);
  EXPECT_FLOAT_EQ(a.pixels.data[4].real(), std::round(4.f / 11.f * 255.f));

  PngWindow w;
  w.auto_window = false;
  w.lo = 2;
  w.hi = 6;
  w.bits = 16;
  write_png(dir + "/win.png", img, w);
  const ImageRecord b = read_image_any(dir + "/win.png");
  EXPECT_FLOAT_EQ(b.pixels.data[0].real(), 0.f);       // below lo: clipped
  EXPECT_FLOAT_EQ(b.pixels.data[4].real(), 32768.f);   // (4-2)/4 * 65535 rounded
  EXPECT_FLOAT_EQ(b.pixels.data[9].real(), 65535.f);   // above hi: clipped

  PngWindow bad;
  bad.auto_window = false;
  bad.lo = 3;
  bad.hi = 3;
  bad.bits = 12;
  EXPECT_EQ(bad.validate().size(), 2u);
  EXPECT_THROW(write_png(dir + "/bad.png", img, bad), InputError);
  EXPECT_FALSE(file_exists(dir + "/bad.png"));
}

TEST(ImageAny, RejectsUnknownExtensionsStacksInPngAndUnreadableFiles) {
  const std::string dir = fresh_dir();
  const ImageRecord rec = ramp_record(4, 4, false);
  expect_input_error([&] { write_image_any(dir + "/x.tiff", rec, Provenance{}, PngWindow{}); }, dir + "/x.tiff", "",
                     "unsupported extension");
  ImageRecord stack;
  stack.pixels = NdArray<cfloat>(Shape{2, 4, 4});
  expect_input_error([&] { write_image_any(dir + "/s.png", stack, Provenance{}, PngWindow{}); }, dir + "/s.png", "",
                     "stack");
  expect_input_error([&] { read_image_any(dir + "/none.nii.gz"); }, dir + "/none.nii.gz", "", "not found");
  write_text_atomic(dir + "/junk.nrrd", "not an image");
  EXPECT_THROW(read_image_any(dir + "/junk.nrrd"), InputError);
  expect_input_error([&] { image_slice(stack, 2, "s.h5"); }, "s.h5", "index", "out of range");
  EXPECT_EQ(list_dir(dir), (std::vector<std::string>{"junk.nrrd"}));
}

}  // namespace
}  // namespace recofold
