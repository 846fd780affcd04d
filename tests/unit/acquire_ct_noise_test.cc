// SPDX-License-Identifier: Apache-2.0
// Tests of CT transmission noise and of the CT simulation record.
#include <gtest/gtest.h>

#include <cmath>
#include <numeric>

#include "recofold/acquire/ct_noise.h"
#include "recofold/acquire/ct_simulation.h"
#include "recofold/core/error.h"
#include "recofold/core/field_error.h"
#include "recofold/ops/joseph_projector.h"
#include "recofold/phantom/raster.h"
#include "unit/ct_ellipse_phantom.h"

namespace recofold {
namespace {

struct Moments {
  double mean = 0, var = 0;
};

Moments moments(const std::vector<double>& x) {
  Moments m;
  for (double v : x) m.mean += v;
  m.mean /= double(x.size());
  for (double v : x) m.var += (v - m.mean) * (v - m.mean);
  m.var /= double(x.size() - 1);
  return m;
}

TEST(TransmissionNoise, PoissonCountsMatchMeanAndVarianceOverMillionRays) {
  // 1000 views x 1000 detectors. Poisson: mean = variance = I0 exp(-p).
  for (const double p : {1.0, 6.0}) {  // lambda = 3679 (PTRS) and 24.8 (multiplication method)
    TransmissionNoiseOptions o;
    o.photons_per_ray = 1e4;
    std::vector<float> sino(1000 * 1000, static_cast<float>(p));
    const Moments m = moments(transmission_counts(o, sino.data(), 1000, 1000, 42));
    const double lambda = 1e4 * std::exp(-double(static_cast<float>(p)));
    EXPECT_NEAR(m.mean / lambda, 1.0, 0.02) << "p = " << p;
    EXPECT_NEAR(m.var / lambda, 1.0, 0.02) << "p = " << p;
  }
}

TEST(TransmissionNoise, ElectronicNoiseAddsItsVariance) {
  TransmissionNoiseOptions o;
  o.photons_per_ray = 1000;
  o.electronic_sigma = 20.0;
  std::vector<float> sino(500 * 400, 0.0f);
  const Moments m = moments(transmission_counts(o, sino.data(), 500, 400, 7));
  EXPECT_NEAR(m.mean / 1000.0, 1.0, 0.02);
  EXPECT_NEAR(m.var / (1000.0 + 400.0), 1.0, 0.02);
}

TEST(TransmissionNoise, LogTransformClipsAtOneCount) {
  EXPECT_FLOAT_EQ(counts_to_line_integral(0.0, 1e4), static_cast<float>(std::log(1e4)));
  EXPECT_FLOAT_EQ(counts_to_line_integral(-3.0, 1e4), static_cast<float>(std::log(1e4)));
  EXPECT_NEAR(counts_to_line_integral(1e4 * std::exp(-2.5), 1e4), 2.5, 1e-6);
}

TEST(TransmissionNoise, SameSeedGivesSameSinogram) {
  TransmissionNoiseOptions o;
  std::vector<float> a(30 * 40, 2.0f), b = a, c = a;
  add_transmission_noise(o, a.data(), 30, 40, 5);
  add_transmission_noise(o, b.data(), 30, 40, 5);
  add_transmission_noise(o, c.data(), 30, 40, 6);
  EXPECT_EQ(a, b);
  EXPECT_NE(a, c);
}

TEST(TransmissionNoise, BowtieFallsFromCentreToEdgeFraction) {
  TransmissionNoiseOptions o;
  o.photons_per_ray = 1e5;
  o.bowtie = true;
  o.bowtie_edge_fraction = 0.2;
  const auto i0 = incident_photons(o, 101);
  EXPECT_DOUBLE_EQ(i0[50], 1e5);
  EXPECT_NEAR(i0[0], 2e4, 1e-6);
  EXPECT_NEAR(i0[100], 2e4, 1e-6);
  EXPECT_LT(i0[20], i0[40]);
}

TEST(TransmissionNoise, RejectsNegativePhotonsAndSigma) {
  TransmissionNoiseOptions o;
  o.photons_per_ray = -1;
  o.electronic_sigma = -2;
  EXPECT_EQ(o.validate().size(), 2u);
  std::vector<float> s(4, 0.0f);
  EXPECT_THROW(add_transmission_noise(o, s.data(), 2, 2, 1), InputError);
}

// 90 parallel views over 180 degrees and acquire's automatic detector
// (ceil(sqrt(2) n) elements of one pixel).
CtSimulationOptions small_parallel() {
  CtSimulationOptions o;
  o.scan.views = 90;
  return o;
}

ImageC complex_of(const ImageF& real) {
  ImageC out(real.rows(), real.cols());
  for (Index k = 0; k < real.size(); ++k) out.data()[k] = cfloat(real.data()[k], 0.0f);
  return out;
}

Phantom disk_phantom(double fov) {
  Phantom p;
  p.fov_mm = fov;
  Component c;
  c.intensity = 1.0;
  c.a = c.b = 0.7;
  p.components = {c};
  return p;
}

TEST(CtSimulation, AutomaticMuGivesLargestLineIntegralFour) {
  const Phantom p = disk_phantom(128.0);
  const Measurement m = simulate_ct(&p, rasterize(p, 64, 64), 2.0, small_parallel());
  ASSERT_TRUE(m.ct.has_value());
  const CtData& ct = *m.ct;
  // Disk of radius 0.7 * 64 mm: largest chord 89.6 mm.
  EXPECT_NEAR(ct.mu_per_mm, 4.0 / 89.6, 1e-4);
  EXPECT_NEAR(*std::max_element(ct.sinogram.data.begin(), ct.sinogram.data.end()), 4.0, 1e-3);
  EXPECT_EQ(ct.numbers.at("mu_automatic"), 1.0);
  EXPECT_EQ(ct.sinogram.shape, (Shape{90, ct.detector_count}));
  // The whole record: modality, grid, automatic detector, truth.
  EXPECT_EQ(m.modality, Modality::kCt);
  EXPECT_EQ(m.ny, 64);
  EXPECT_EQ(ct.detector_count, 91);  // ceil(sqrt(2) 64)
  EXPECT_DOUBLE_EQ(ct.detector_spacing_mm, 2.0);
  ASSERT_TRUE(m.truth.has_value());
  EXPECT_EQ(m.truth_kind, "analytic");
}

TEST(CtScan, AutomaticFanGeometryAndFieldPathErrors) {
  CtScan scan;
  scan.beam = CtBeam::kFan;
  scan.views = 36;
  const CtGeometry g = make_ct_geometry(scan, 64, 64, 2.0);
  EXPECT_NEAR(g.angles_rad.back(), 2.0 * M_PI * 35.0 / 36.0, 1e-12);  // automatic arc: 360 degrees for fan
  EXPECT_DOUBLE_EQ(g.source_to_isocenter_mm, 256.0);                   // 2 x field of view
  EXPECT_DOUBLE_EQ(g.source_to_detector_mm, 512.0);                    // 2 x source distance
  EXPECT_DOUBLE_EQ(g.detector_spacing_mm, 4.0);                        // one pixel at the isocentre
  scan.detector_count = -3;
  scan.arc_deg = 400.0;
  try {
    make_ct_geometry(scan, 64, 64, 2.0);
    ADD_FAILURE() << "no error";
  } catch (const InvalidFields& e) {
    ASSERT_EQ(e.errors().size(), 2u) << e.what();
    EXPECT_EQ(e.errors()[0].field, "ct.arc_deg");
    EXPECT_EQ(e.errors()[1].field, "ct.detector_count");
  }
  scan = CtScan{};
  scan.beam = CtBeam::kFan;
  scan.source_to_isocenter_mm = 10.0;  // inside the image
  try {
    make_ct_geometry(scan, 64, 64, 2.0);
    ADD_FAILURE() << "no error";
  } catch (const InvalidFields& e) {
    EXPECT_EQ(e.field(), "ct.source_to_isocenter_mm") << e.what();
  }
}

TEST(CtSimulation, DiscreteTruthAgreesWithAnalyticWithinTwoPercent) {
  CtSimulationOptions o = small_parallel();
  o.mu_per_mm = 0.02;
  const Phantom p = disk_phantom(128.0);
  const Measurement exact = simulate_ct(&p, rasterize(p, 64, 64), 2.0, o);
  // Raster: area fraction of each 2 mm pixel inside the disk (16x16 samples).
  ImageF raster(64, 64);
  for (Index iy = 0; iy < 64; ++iy)
    for (Index ix = 0; ix < 64; ++ix) {
      int in = 0;
      for (int s = 0; s < 256; ++s) {
        const double x = -1.0 + (2.0 * ix + (2.0 * (s % 16) + 1) / 16.0) / 64.0;
        const double y = 1.0 - (2.0 * iy + (2.0 * (s / 16) + 1) / 16.0) / 64.0;
        in += (x * x + y * y <= 0.49);
      }
      raster(iy, ix) = in / 256.0f;
    }
  o.analytic = false;
  const Measurement discrete = simulate_ct(nullptr, complex_of(raster), 2.0, o);
  double num = 0, den = 0;
  for (size_t k = 0; k < exact.ct->sinogram.data.size(); ++k) {
    const double d = discrete.ct->sinogram.data[k] - exact.ct->sinogram.data[k];
    num += d * d;
    den += double(exact.ct->sinogram.data[k]) * exact.ct->sinogram.data[k];
  }
  EXPECT_LT(std::sqrt(num / den), 0.02);
  EXPECT_EQ(discrete.ct->texts.at("sinogram_source"), "discrete");
  EXPECT_EQ(discrete.truth_kind, "discrete");
}

TEST(CtSimulation, NoisySinogramRecordsPhotonsAndStaysNearNoiseless) {
  CtSimulationOptions o = small_parallel();
  const Phantom p = disk_phantom(128.0);
  const ImageC raster = rasterize(p, 32, 32);
  const Measurement clean = simulate_ct(&p, raster, 4.0, o);
  o.noisy = true;
  o.noise.photons_per_ray = 1e5;
  o.seed = 3;
  const Measurement noisy = simulate_ct(&p, raster, 4.0, o);
  EXPECT_EQ(noisy.ct->photons_per_ray, 1e5);
  double worst = 0;
  for (size_t k = 0; k < clean.ct->sinogram.data.size(); ++k)
    worst = std::max(worst, double(std::abs(noisy.ct->sinogram.data[k] - clean.ct->sinogram.data[k])));
  // At p <= 4 a ray keeps >= 1800 counts: 6 sigma of the log is below 0.15.
  EXPECT_LT(worst, 0.15);
  EXPECT_GT(worst, 0.0);
}

TEST(CtSimulation, ProjectedHeadRasterMatchesPhantomLineIntegralsWithinTwoPercent) {
  // The phantom module's exact line integrals and anti-aliased raster of the
  // modified Shepp-Logan head at 256^2 / 256 detectors / 180 views.
  Phantom head;
  head.fov_mm = 256.0;
  for (const auto& e : testing::modified_shepp_logan()) {
    Component c;
    c.intensity = e.rho;
    c.a = e.a;
    c.b = e.b;
    c.x0 = e.x0;
    c.y0 = e.y0;
    c.phi_deg = e.phi_deg;
    head.components.push_back(c);
  }
  CtSimulationOptions o;
  for (int i = 0; i < 180; ++i) o.scan.angles_rad.push_back(M_PI * i / 180);
  o.scan.detector_count = 256;
  o.mu_per_mm = 1.0;
  const ImageC raster = rasterize(head, 256, 256);
  const Measurement exact = simulate_ct(&head, raster, 1.0, o);
  o.analytic = false;
  const Measurement projected = simulate_ct(nullptr, raster, 1.0, o);
  double num = 0, den = 0;
  for (size_t k = 0; k < exact.ct->sinogram.data.size(); ++k) {
    const double d = projected.ct->sinogram.data[k] - exact.ct->sinogram.data[k];
    num += d * d;
    den += double(exact.ct->sinogram.data[k]) * exact.ct->sinogram.data[k];
  }
  EXPECT_LT(std::sqrt(num / den), 0.02);
  RecordProperty("relative_l2", std::to_string(std::sqrt(num / den)));
}

TEST(CtSimulation, RejectsPhantomWhoseFieldOfViewDiffersFromGrid) {
  const Phantom p = disk_phantom(256.0);
  EXPECT_THROW(simulate_ct(&p, rasterize(p, 64, 64), 2.0, small_parallel()), InputError);
}

}  // namespace
}  // namespace recofold
