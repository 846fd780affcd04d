// SPDX-License-Identifier: Apache-2.0
// Benchmark helper for bench/nufft_bench.py (not part of `make check`): non-Cartesian reconstruction
// quality and the cost of CG-SENSE on radial vs Cartesian samples, on the library directly.
//
// Usage (from a build folder; SOURCE = the source tree, for the head phantom table):
//   acquire_nufft_bench quality SOURCE N SPOKES READOUT COILS SIGMA
//       Golden-angle radial, exact multi-coil k-space of the head phantom
//       (coil maps as a Fourier series), complex Gaussian noise SIGMA per
//       real/imaginary part, seed 1. Prints key/value lines: PSNR (dB, magnitude
//       against the N x N raster) of gridding (DCF-weighted adjoint, coil
//       combination with the true maps), CG-SENSE (20 iterations from zero),
//       TV-ADMM with lambda by the discrepancy principle (60 iterations),
//       and the chosen lambda.
//   acquire_nufft_bench cgsense SOURCE N SPOKES READOUT COILS ITERATIONS
//       CG-SENSE of ITERATIONS iterations from zero, whole process after the
//       data exist: radial = NUFFT plan (binning) + A^H y + CG with the Toeplitz
//       normal operator (its set-up included); Cartesian = the masked-Fourier
//       operator + A^H y + CG, on a mask with the same number of samples
//       (equally spaced full phase-encode lines plus the rest in the centre
//       line block). Best of 3. Prints radial_ms, cartesian_ms, ratio,
//       radial_plan_ms, radial_toeplitz_setup_ms, samples_radial, samples_cartesian.
// Threads: RECOFOLD_FFT_THREADS (default 1). Exit 2 on bad arguments.
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "recofold/acquire/exact_kspace.h"
#include "recofold/core/rng.h"
#include "recofold/metrics/image_quality.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/ops/density_compensation.h"
#include "recofold/ops/fft.h"
#include "recofold/ops/fourier.h"
#include "recofold/ops/nufft.h"
#include "recofold/phantom/phantom_table.h"
#include "recofold/phantom/raster.h"
#include "recofold/priors/prior_spec.h"
#include "recofold/recon/admm.h"
#include "recofold/recon/cg.h"
#include "recofold/recon/lambda_discrepancy.h"
#include "recofold/sampling/trajectory.h"

namespace {

using namespace recofold;
using Clock = std::chrono::steady_clock;

double ms_since(Clock::time_point t0) { return std::chrono::duration<double, std::milli>(Clock::now() - t0).count(); }

Trajectory golden_radial(Index n, int spokes, int readout) {
  TrajectoryOptions o;
  o.kind = TrajectoryKind::kRadialGolden;
  o.ny = o.nx = n;
  o.spokes = spokes;
  o.readout = readout;
  o.dcf = DcfMethod::kRadialRamp;
  return make_trajectory(o);
}

struct Simulated {
  Trajectory traj;
  NdArray<cfloat> maps;  // [C, N, N], the series evaluated on the raster
  VecC y;                // [C M]
  ImageF truth;          // magnitude of the raster
};

Simulated simulate(const std::string& source, Index n, int spokes, int readout, int coils, double sigma) {
  Simulated s;
  s.traj = golden_radial(n, spokes, readout);
  const Phantom p = load_phantom_table(source + "/phantoms/shepp-logan-modified.toml");
  CoilArrayOptions co;
  co.coils = coils;
  const CoilFourierSeries series = fit_coil_fourier_series(co);
  s.maps = coil_series_maps(series, n, n);
  const NdArray<cfloat> k = exact_kspace_at_points(p, n, n, s.traj.kx, s.traj.ky, &series);
  s.y.resize(k.size());
  Rng rng(1);
  for (Index i = 0; i < k.size(); ++i)
    s.y[i] = k.data[static_cast<size_t>(i)] +
             cfloat(static_cast<float>(sigma * rng.normal()), static_cast<float>(sigma * rng.normal()));
  const ImageC raster = rasterize(p, static_cast<int>(n), static_cast<int>(n));
  s.truth = raster.abs();
  return s;
}

ImageF magnitude_of(const VecC& x, Index n) {
  ImageF m(n, n);
  for (Index i = 0; i < n * n; ++i) m.data()[i] = std::abs(x[i]);
  return m;
}

int quality(char** argv) {
  const std::string source = argv[2];
  const Index n = std::atol(argv[3]);
  const int spokes = std::atoi(argv[4]), readout = std::atoi(argv[5]), coils = std::atoi(argv[6]);
  const double sigma = std::atof(argv[7]);
  const Simulated s = simulate(source, n, spokes, readout, coils, sigma);
  const Index m = s.traj.kx.size();
  auto plan = std::make_shared<const NufftPlan>(n, n, s.traj.kx, s.traj.ky);
  const SenseNufft e(plan, s.maps);

  // Gridding: x = Σ_c conj(S_c) A^H W y_c / Σ_c |S_c|².
  VecC wy = s.y;
  for (int c = 0; c < coils; ++c)
    for (Index j = 0; j < m; ++j) wy[c * m + j] *= s.traj.dcf[static_cast<size_t>(j)];
  VecC grid;
  e.adjoint(wy, grid);
  for (Index i = 0; i < n * n; ++i) {
    double ss = 0.0;
    for (int c = 0; c < coils; ++c) ss += std::norm(s.maps.data[static_cast<size_t>(c * n * n + i)]);
    grid[i] = ss > 1e-12 ? grid[i] / static_cast<float>(ss) : cfloat(0.0f);
  }
  const double psnr_grid = psnr(s.truth, magnitude_of(grid, n));

  CgOptions cg;
  cg.max_iterations = 20;
  cg.record_objective = false;
  VecC xcg;
  solve_cg(cg, e, s.y, xcg);
  const double psnr_cg = psnr(s.truth, magnitude_of(xcg, n));

  PriorSpec ps;
  ps.kind = PriorKind::kTv;
  ps.lambda = 1.0;
  const std::unique_ptr<Prior> tv = make_prior(ps, Shape{n, n});
  DiscrepancyOptions d;
  d.noise_sigma = sigma;
  const RegularisedSolve solve = [&e, &s](const Prior& p, VecC& x) {
    AdmmOptions o;
    o.max_iterations = 60;
    o.record_objective = false;
    return solve_admm(o, e, p, s.y, x);
  };
  VecC xtv;
  const DiscrepancyChoice choice = choose_lambda_discrepancy(d, e, s.y, *tv, solve, xtv);
  const double psnr_tv = psnr(s.truth, magnitude_of(xtv, n));
  std::printf("n %lld\ncoils %d\nspokes %d\nreadout %d\nsigma %g\n", static_cast<long long>(n), coils, spokes,
              readout, sigma);
  std::printf("psnr_gridding %.3f\npsnr_cgsense %.3f\npsnr_tv_admm %.3f\nlambda %.6g\nbracketed %d\n", psnr_grid,
              psnr_cg, psnr_tv, choice.lambda, choice.bracketed ? 1 : 0);
  return 0;
}

// A Cartesian mask [n, n] with exactly `samples` samples: equally spaced full
// rows, then the remaining samples as the centre part of the next rows.
NdArray<uint8_t> cartesian_mask(Index n, Index samples) {
  NdArray<uint8_t> mask(Shape{n, n}, 0);
  const Index rows = std::min(n, samples / n);
  for (Index r = 0; r < rows; ++r) {
    const Index row = (r * n) / std::max<Index>(rows, 1);
    for (Index x = 0; x < n; ++x) mask.data[static_cast<size_t>(row * n + x)] = 1;
  }
  Index left = samples - rows * n;
  for (Index row = 0; row < n && left > 0; ++row)
    for (Index x = 0; x < n && left > 0; ++x)
      if (!mask.data[static_cast<size_t>(row * n + x)]) {
        mask.data[static_cast<size_t>(row * n + x)] = 1;
        --left;
      }
  return mask;
}

int cgsense(char** argv) {
  const std::string source = argv[2];
  const Index n = std::atol(argv[3]);
  const int spokes = std::atoi(argv[4]), readout = std::atoi(argv[5]), coils = std::atoi(argv[6]);
  const int iterations = std::atoi(argv[7]);
  const Simulated s = simulate(source, n, spokes, readout, coils, 0.003);
  const Index m = s.traj.kx.size();
  const NdArray<uint8_t> mask = cartesian_mask(n, m);
  Index samples_cart = 0;
  for (uint8_t v : mask.data) samples_cart += v;
  // Cartesian data of the same object: A_cart of the raster (the timing does not depend on the values).
  VecC xr(n * n);
  {
    const Phantom p = load_phantom_table(source + "/phantoms/shepp-logan-modified.toml");
    const ImageC raster = rasterize(p, static_cast<int>(n), static_cast<int>(n));
    for (Index i = 0; i < n * n; ++i) xr[i] = raster.data()[i];
  }
  VecC ycart;
  MaskedFourier(n, n, mask, s.maps).apply(xr, ycart);

  CgOptions cg;
  cg.max_iterations = iterations;
  cg.tolerance = 0.0;
  cg.record_objective = false;
  double best_radial = 1e300, best_cart = 1e300, plan_ms = 0.0, toe_ms = 0.0;
  for (int round = 0; round < 3; ++round) {
    auto t0 = Clock::now();
    auto plan = std::make_shared<const NufftPlan>(n, n, s.traj.kx, s.traj.ky);
    const double tp = ms_since(t0);
    const SenseNufft e(plan, s.maps);
    const auto t1 = Clock::now();
    e.toeplitz();
    const double tt = ms_since(t1);
    VecC x;
    solve_cg(cg, e, s.y, x);
    const double radial = ms_since(t0);
    if (radial < best_radial) {
      best_radial = radial;
      plan_ms = tp;
      toe_ms = tt;
    }
    t0 = Clock::now();
    const MaskedFourier a(n, n, mask, s.maps);
    VecC xc;
    solve_cg(cg, a, ycart, xc);
    best_cart = std::min(best_cart, ms_since(t0));
  }
  std::printf("n %lld\ncoils %d\niterations %d\nthreads %d\n", static_cast<long long>(n), coils, iterations,
              fft_threads());
  std::printf("samples_radial %lld\nsamples_cartesian %lld\n", static_cast<long long>(m),
              static_cast<long long>(samples_cart));
  std::printf("radial_ms %.3f\ncartesian_ms %.3f\nratio %.3f\nradial_plan_ms %.3f\nradial_toeplitz_setup_ms %.3f\n",
              best_radial, best_cart, best_radial / best_cart, plan_ms, toe_ms);
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  try {
    const char* env = std::getenv("RECOFOLD_FFT_THREADS");
    recofold::set_fft_threads(env ? std::atoi(env) : 1);
    const std::string mode = argc > 1 ? argv[1] : "";
    if (mode == "quality" && argc == 8) return quality(argv);
    if (mode == "cgsense" && argc == 8) return cgsense(argv);
  } catch (const std::exception& e) {
    std::cerr << e.what() << "\n";
    return 2;
  }
  std::cerr << "usage: acquire_nufft_bench quality SOURCE N SPOKES READOUT COILS SIGMA | "
               "cgsense SOURCE N SPOKES READOUT COILS ITERATIONS\n";
  return 2;
}
