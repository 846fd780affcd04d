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

#include "recofold/acquire/exact_kspace.h"
#include "recofold/core/rng.h"
#include "recofold/metrics/image_quality.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/ops/nufft.h"
#include "recofold/phantom/phantom_table.h"
#include "recofold/phantom/raster.h"
#include "recofold/priors/prior_spec.h"
#include "recofold/recon/admm.h"
#include "recofold/recon/cg.h"
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
  CoilArrayOptions co;
  co.coils = coils;
  const CoilFourierSeries series = fit_coil_fourier_series(co);
  const NdArray<cfloat> maps = coil_series_maps(series, n, n);
  const NdArray<cfloat> k = exact_kspace_at_points(p, n, n, t.kx, t.ky, &series);
  VecC y(k.size());
  Rng rng(7);
  for (Index i = 0; i < k.size(); ++i)
    y[i] = k.data[static_cast<size_t>(i)] +
           cfloat(static_cast<float>(sigma * rng.normal()), static_cast<float>(sigma * rng.normal()));
  const ImageF truth = rasterize(p, static_cast<int>(n), static_cast<int>(n)).abs();

  auto plan = std::make_shared<const NufftPlan>(n, n, t.kx, t.ky);
  const SenseNufft e(plan, maps);

  // Gridding with the true maps: Σ_c conj(S_c) A^H W y_c / Σ_c |S_c|².
  VecC wy = y;
  for (int c = 0; c < coils; ++c)
    for (Index j = 0; j < m; ++j) wy[c * m + j] *= t.dcf[static_cast<size_t>(j)];
  VecC grid;
  e.adjoint(wy, grid);
  for (Index i = 0; i < n * n; ++i) {
    double ss = 0.0;
    for (int c = 0; c < coils; ++c) ss += std::norm(maps.data[static_cast<size_t>(c * n * n + i)]);
    grid[i] = ss > 1e-12 ? grid[i] / static_cast<float>(ss) : cfloat(0.0f);
  }
  const double psnr_grid = psnr(truth, magnitude_of(grid, n));

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

}  // namespace
}  // namespace recofold
