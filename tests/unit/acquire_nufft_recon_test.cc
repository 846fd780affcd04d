// SPDX-License-Identifier: Apache-2.0
// End-to-end check of non-Cartesian reconstruction on the library (a small version of the 256^2 case
// in bench/nufft_bench.py): exact multi-coil golden-angle radial k-space of the head phantom,
// gridding vs CG-SENSE vs TV-ADMM with lambda by the discrepancy principle.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <string>

#include "recofold/acquire/mri_trajectory.h"
#include "recofold/metrics/image_quality.h"
#include "recofold/core/error.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/ops/nufft.h"
#include "recofold/phantom/phantom_table.h"
#include "recofold/phantom/raster.h"
#include "recofold/priors/prior_spec.h"
#include "recofold/recon/admm.h"
#include "recofold/recon/cg.h"
#include "recofold/recon/gridding.h"
#include "recofold/recon/lambda_discrepancy.h"
#include "recofold/sampling/trajectory.h"

namespace recofold {
namespace {

std::string source_dir() {
  if (const char* env = std::getenv("RECOFOLD_SOURCE_DIR")) return env;
  const std::string here = __FILE__;
  return here.substr(0, here.rfind("/tests/"));
}

ImageF magnitude_of(const VecC& x, Index n) {
  ImageF m(n, n);
  for (Index i = 0; i < n * n; ++i) m.data()[i] = std::abs(x[i]);
  return m;
}

// 64^2, 8 coils, 16 golden-angle spokes of 128 samples (the angular
// undersampling of the 256^2 / 64-spoke case: about 6x below the pi N / 2
// spokes of full angular sampling), sigma = 0.003 per real/imaginary part.
TEST(NonCartesianRecon, TvAdmmWithAutoLambdaAndCgSenseBeatGriddingOnTheHeadPhantom) {
  const Index n = 64;
  const int coils = 8;
  const double sigma = 0.003;
  TrajectoryOptions to;
  to.kind = TrajectoryKind::kRadialGolden;
  to.ny = to.nx = n;
  to.spokes = 16;
  to.readout = 128;
  to.dcf = DcfMethod::kRadialRamp;
  const Trajectory t = make_trajectory(to);
  const Index m = t.kx.size();
  ASSERT_EQ(m, 16 * 128);

  const Phantom p = load_phantom_table(source_dir() + "/phantoms/shepp-logan-modified.toml");
  const ImageC raster = rasterize(p, static_cast<int>(n), static_cast<int>(n));
  MriSimulationOptions so;
  so.coil_array.coils = coils;
  so.noise_sigma = sigma;
  so.seed = 7;
  const TrajectorySamples s = simulate_mri_trajectory(&p, raster, t, so);
  ASSERT_EQ(s.kspace.shape, (Shape{coils, m}));
  EXPECT_EQ(s.noise_sigma, sigma);
  const ImageF truth = raster.abs();

  auto plan = std::make_shared<const NufftPlan>(n, n, t.kx, t.ky);
  const ForwardModel f = make_trajectory_forward_model(plan, s.kspace, s.coil_maps, s.noise_sigma);
  const LinearOperator& e = *f.op;
  const VecC& y = f.y;
  EXPECT_EQ(f.measured_values, coils * m);

  // Gridding with the true maps: Σ_c conj(S_c) A^H W y_c / Σ_c |S_c|².
  const ImageC g = gridding(*plan, t.dcf, s.kspace, s.coil_maps, CoilCombine::kSensitivity);
  const double psnr_grid = psnr(truth, g.abs());

  CgOptions cg;
  cg.max_iterations = 20;
  cg.record_objective = false;
  VecC xcg;
  solve_cg(cg, e, y, xcg);
  const double psnr_cg = psnr(truth, magnitude_of(xcg, n));

  PriorSpec ps;
  ps.kind = PriorKind::kTv;
  ps.lambda = 1.0;
  const std::unique_ptr<Prior> tv = make_prior(ps, Shape{n, n});
  DiscrepancyOptions d;
  d.noise_sigma = sigma;
  d.measurement_count = f.measured_values;
  const RegularisedSolve solve = [&e, &y](const Prior& prior, VecC& x) {
    AdmmOptions o;
    o.max_iterations = 60;
    o.record_objective = false;
    return solve_admm(o, e, prior, y, x);
  };
  VecC xtv;
  const DiscrepancyChoice choice = choose_lambda_discrepancy(d, e, y, *tv, solve, xtv);
  const double psnr_tv = psnr(truth, magnitude_of(xtv, n));

  RecordProperty("psnr_gridding", std::to_string(psnr_grid));
  RecordProperty("psnr_cgsense", std::to_string(psnr_cg));
  RecordProperty("psnr_tv_admm", std::to_string(psnr_tv));
  EXPECT_TRUE(choice.bracketed) << choice.rule;
  EXPECT_GT(psnr_cg, psnr_grid + 1.0) << "gridding " << psnr_grid << " dB";
  EXPECT_GE(psnr_tv, psnr_grid + 8.0) << "gridding " << psnr_grid << " dB, CG-SENSE " << psnr_cg << " dB, lambda "
                                      << choice.lambda;
  std::printf("gridding %.2f dB, CG-SENSE %.2f dB, TV-ADMM %.2f dB (lambda %.3g)\n", psnr_grid, psnr_cg, psnr_tv,
              choice.lambda);
}


// The simulation's noise has the requested σ per part, the discrete route is the SENSE-NUFFT of the
// raster, and bad input names the field.
TEST(NonCartesianRecon, SimulationNoiseDiscreteRouteAndBadInput) {
  const Index n = 32;
  TrajectoryOptions to;
  to.ny = to.nx = n;
  to.spokes = 24;
  to.readout = 64;
  const Trajectory t = make_trajectory(to);
  const Index m = t.kx.size();
  const Phantom p = load_phantom_table(source_dir() + "/phantoms/shepp-logan-modified.toml");
  const ImageC raster = rasterize(p, static_cast<int>(n), static_cast<int>(n));
  MriSimulationOptions so;
  so.coil_array.coils = 4;
  const TrajectorySamples clean = simulate_mri_trajectory(&p, raster, t, so);
  so.noise_sigma = 0.05;
  so.seed = 3;
  const TrajectorySamples noisy = simulate_mri_trajectory(&p, raster, t, so);
  double var = 0.0;
  for (Index i = 0; i < clean.kspace.size(); ++i)
    var += std::norm(noisy.kspace.data[static_cast<size_t>(i)] - clean.kspace.data[static_cast<size_t>(i)]);
  var /= 2.0 * static_cast<double>(clean.kspace.size());
  EXPECT_NEAR(std::sqrt(var), 0.05, 0.05 * 0.03);  // 6144 complex values: std error of σ ≈ 0.6%

  so.noise_sigma = 0.0;
  so.truth = MriTruth::kDiscrete;
  const TrajectorySamples discrete = simulate_mri_trajectory(nullptr, raster, t, so);
  auto plan = std::make_shared<const NufftPlan>(n, n, t.kx, t.ky);
  const SenseNufft e(plan, discrete.coil_maps);
  VecC y;
  e.apply(Eigen::Map<const VecC>(raster.data(), n * n), y);
  double diff = 0.0, ref = 0.0, gap = 0.0;
  for (Index i = 0; i < y.size(); ++i) {
    diff += std::norm(y[i] - discrete.kspace.data[static_cast<size_t>(i)]);
    gap += std::norm(y[i] - clean.kspace.data[static_cast<size_t>(i)]);
    ref += std::norm(y[i]);
  }
  EXPECT_LT(std::sqrt(diff / ref), 1e-6);
  // The exact k-space differs from the raster's (rasterisation error), but not by much.
  EXPECT_GT(std::sqrt(gap / ref), 1e-4);
  EXPECT_LT(std::sqrt(gap / ref), 0.3);

  so.truth = MriTruth::kAnalytic;
  auto field_of = [](auto&& f) {
    try {
      f();
    } catch (const InputError& e) {
      return e.field();
    }
    return std::string("(no error)");
  };
  EXPECT_EQ(field_of([&] { simulate_mri_trajectory(nullptr, raster, t, so); }), "truth");
  const ImageC other = rasterize(p, 16, 16);
  EXPECT_EQ(field_of([&] { simulate_mri_trajectory(&p, other, t, so); }), "trajectory");
  std::vector<float> short_dcf(t.dcf.begin(), t.dcf.end() - 1);
  EXPECT_EQ(field_of([&] { gridding(*plan, short_dcf, clean.kspace, clean.coil_maps, CoilCombine::kSumOfSquares); }),
            "/trajectory/dcf");
  NdArray<cfloat> wrong(Shape{4, m - 1});
  EXPECT_EQ(field_of([&] { gridding(*plan, t.dcf, wrong, clean.coil_maps, CoilCombine::kSumOfSquares); }),
            "/mri/kspace");
  EXPECT_EQ(field_of([&] { make_trajectory_forward_model(plan, wrong, clean.coil_maps, 0.0); }), "/mri/kspace");
  EXPECT_EQ(field_of([&] { gridding(*plan, t.dcf, clean.kspace, {}, CoilCombine::kSensitivity); }),
            "/mri/coil_maps");
}

}  // namespace
}  // namespace recofold
