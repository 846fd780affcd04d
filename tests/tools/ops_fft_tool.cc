// SPDX-License-Identifier: Apache-2.0
// Helper for tests/reference/ops_fft_numpy.py and bench/mri_fft_bench.py: centred FFT on raw complex64 files, and timings.
//
// Usage:
//   ops_fft_tool forward|inverse NY NX IN.raw OUT.raw
//       IN/OUT: NY*NX complex numbers, interleaved float32 (re, im), row-major.
//   ops_fft_tool bench-fft NY NX REPEATS
//       prints "centred_fft_ms <t>": mean time of one centred orthonormal FFT
//       (copy-in with shift, FFTW, copy-out with shift and scale).
//   ops_fft_tool bench-sense NY NX COILS REPEATS
//       prints "sense_ms <t>", "raw_fftw_ms <t>" and "ratio <r>": one forward +
//       one adjoint of E = M F S (R = 4 random lines) against the 2*COILS raw
//       in-place FFTW transforms on aligned buffers that it needs.
// FFTW threads: set by RECOFOLD_FFT_THREADS (default 1, so numbers compare
// with single-threaded numpy); RECOFOLD_FFT_MEASURE=0 plans with FFTW_ESTIMATE
// instead of the default FFTW_MEASURE. Exit 0 on success, 2 on bad arguments or files.
#include <fftw3.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <fstream>
#include <iostream>
#include <string>

#include "recofold/core/rng.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/ops/fft.h"
#include "recofold/ops/fourier.h"

namespace {

using namespace recofold;
using Clock = std::chrono::steady_clock;

double ms_since(Clock::time_point t0) {
  return std::chrono::duration<double, std::milli>(Clock::now() - t0).count();
}

VecC random_vec(Index n, uint64_t seed) {
  Rng rng(seed);
  VecC v(n);
  for (Index i = 0; i < n; ++i) v[i] = cfloat(static_cast<float>(rng.normal()), static_cast<float>(rng.normal()));
  return v;
}

int transform_files(char** argv) {
  const std::string mode = argv[1];
  const Index ny = std::atol(argv[2]), nx = std::atol(argv[3]);
  if ((mode != "forward" && mode != "inverse") || ny < 1 || nx < 1) {
    std::cerr << "bad mode or size\n";
    return 2;
  }
  VecC in(ny * nx), out(ny * nx);
  std::ifstream f(argv[4], std::ios::binary);
  f.read(reinterpret_cast<char*>(in.data()), static_cast<std::streamsize>(sizeof(cfloat) * in.size()));
  if (!f) {
    std::cerr << argv[4] << ": cannot read " << in.size() << " complex64 values\n";
    return 2;
  }
  fft2c(in.data(), out.data(), ny, nx, mode == "forward" ? FftDirection::kForward : FftDirection::kInverse);
  std::ofstream o(argv[5], std::ios::binary);
  o.write(reinterpret_cast<const char*>(out.data()), static_cast<std::streamsize>(sizeof(cfloat) * out.size()));
  return o ? 0 : 2;
}

int bench_fft(Index ny, Index nx, int repeats) {
  const VecC x = random_vec(ny * nx, 1);
  VecC y(ny * nx);
  fft2c(x.data(), y.data(), ny, nx, FftDirection::kForward);  // plan
  const auto t0 = Clock::now();
  for (int r = 0; r < repeats; ++r) fft2c(x.data(), y.data(), ny, nx, FftDirection::kForward);
  std::printf("centred_fft_ms %.6f\n", ms_since(t0) / repeats);
  return 0;
}

int bench_sense(Index ny, Index nx, int coils, int repeats) {
  CoilArrayOptions o;
  o.coils = coils;
  NdArray<uint8_t> mask(Shape{ny, nx}, 0);
  Rng rng(3);
  for (Index r = 0; r < ny; ++r)
    if (rng.uniform() < 0.25 || std::abs(r - ny / 2) < 8)
      for (Index c = 0; c < nx; ++c) mask.data[static_cast<size_t>(r * nx + c)] = 1;
  const MaskedFourier e(ny, nx, mask, synthetic_coil_maps(o, ny, nx));
  const VecC x = random_vec(ny * nx, 2);
  VecC y, xa;
  e.apply(x, y);  // plans
  e.adjoint(y, xa);

  // The raw transforms E needs: 2 * coils in-place FFTs on aligned buffers,
  // run the same way (coils side by side on fft_threads() threads).
  const int threads = std::min(coils, fft_threads());
  const size_t n = static_cast<size_t>(ny * nx);
  std::vector<fftwf_complex*> bufs(static_cast<size_t>(coils));
  for (auto& b : bufs) b = fftwf_alloc_complex(n);
  // Same planner flags as the library; planning overwrites the buffers, which is fine here.
  const char* measure = std::getenv("RECOFOLD_FFT_MEASURE");
  const unsigned flags = (measure && std::string(measure) == "0") ? FFTW_ESTIMATE : FFTW_MEASURE;
  fftwf_plan fwd = fftwf_plan_dft_2d(static_cast<int>(ny), static_cast<int>(nx), bufs[0], bufs[0], FFTW_FORWARD, flags);
  fftwf_plan inv = fftwf_plan_dft_2d(static_cast<int>(ny), static_cast<int>(nx), bufs[0], bufs[0], FFTW_BACKWARD, flags);
  const VecC fill = random_vec(ny * nx, 4);  // after planning, which overwrites the buffers
  auto refill = [&] {
    for (auto& b : bufs)
      for (size_t i = 0; i < n; ++i) {
        b[i][0] = fill[static_cast<Index>(i)].real() * 1e-20f;
        b[i][1] = fill[static_cast<Index>(i)].imag() * 1e-20f;
      }
  };
  // Rounds alternate between the two, and the best round of each counts: on
  // a shared machine this removes most of the interference from other load.
  double sense_ms = 1e300, raw_ms = 1e300;
  for (int round = 0; round < 7; ++round) {
    const auto t0 = Clock::now();
    for (int r = 0; r < repeats; ++r) {
      e.apply(x, y);
      e.adjoint(y, xa);
    }
    sense_ms = std::min(sense_ms, ms_since(t0) / repeats);
    const auto t1 = Clock::now();
    for (int r = 0; r < repeats; ++r) {
      // Each unnormalised round trip multiplies by ny*nx: start tiny and
      // refill every 6 round trips so the values stay finite and normal.
      if (r % 6 == 0) refill();
#pragma omp parallel for num_threads(threads) schedule(static)
      for (int c = 0; c < coils; ++c) fftwf_execute_dft(fwd, bufs[static_cast<size_t>(c)], bufs[static_cast<size_t>(c)]);
#pragma omp parallel for num_threads(threads) schedule(static)
      for (int c = 0; c < coils; ++c) fftwf_execute_dft(inv, bufs[static_cast<size_t>(c)], bufs[static_cast<size_t>(c)]);
    }
    raw_ms = std::min(raw_ms, ms_since(t1) / repeats);
  }
  fftwf_destroy_plan(fwd);
  fftwf_destroy_plan(inv);
  for (auto& b : bufs) fftwf_free(b);
  std::printf("sense_ms %.6f\nraw_fftw_ms %.6f\nratio %.4f\nthreads %d\n", sense_ms, raw_ms, sense_ms / raw_ms, threads);
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  try {
    const char* env = std::getenv("RECOFOLD_FFT_THREADS");
    recofold::set_fft_threads(env ? std::atoi(env) : 1);
    const char* measure = std::getenv("RECOFOLD_FFT_MEASURE");
    recofold::set_fft_measure(!(measure && std::string(measure) == "0"));
    const std::string mode = argc > 1 ? argv[1] : "";
    if ((mode == "forward" || mode == "inverse") && argc == 6) return transform_files(argv);
    if (mode == "bench-fft" && argc == 5) return bench_fft(std::atol(argv[2]), std::atol(argv[3]), std::atoi(argv[4]));
    if (mode == "bench-sense" && argc == 6)
      return bench_sense(std::atol(argv[2]), std::atol(argv[3]), std::atoi(argv[4]), std::atoi(argv[5]));
  } catch (const std::exception& e) {
    std::cerr << e.what() << "\n";
    return 2;
  }
  std::cerr << "usage: ops_fft_tool forward|inverse NY NX IN.raw OUT.raw | bench-fft NY NX REPEATS | "
               "bench-sense NY NX COILS REPEATS\n";
  return 2;
}
