// SPDX-License-Identifier: Apache-2.0
// Helper for tests/reference/ops_nufft_numpy.py and bench/nufft_bench.py: NUFFT on raw files, and timings.
//
// Usage:
//   ops_nufft_tool forward|adjoint NY NX EPS SIGMA KERNEL POINTS IN OUT
//       POINTS: M pairs (kx, ky) of float64, cycles per FOV. forward: IN is the
//       image, NY*NX complex64 (interleaved float32, row-major), OUT M complex64;
//       adjoint: IN is M complex64, OUT the image. KERNEL: es | kb.
//   ops_nufft_tool bench N SPOKES READOUT EPS SIGMA REPEATS [COILS]
//       golden-angle radial points; prints key/value lines: plan_ms, forward_ms,
//       adjoint_ms, fwd_adj_ms, toeplitz_ms, fft2x_ms (one unnormalised FFTW
//       transform of the 2N x 2N grid), grid_fft_ms (one transform of the
//       NUFFT's own oversampled grid), width, grid, and with COILS > 1
//       sense_normal_ms (SENSE Toeplitz normal, all coils). Best of 7 rounds.
// FFTW threads: RECOFOLD_FFT_THREADS (default 1). Exit 0 on success, 2 on bad arguments or files.
#include <fftw3.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <fstream>
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "recofold/core/rng.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/ops/fft.h"
#include "recofold/ops/nufft.h"

namespace {

using namespace recofold;
using Clock = std::chrono::steady_clock;

double ms_since(Clock::time_point t0) { return std::chrono::duration<double, std::milli>(Clock::now() - t0).count(); }

template <typename T>
std::vector<T> read_raw(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw std::runtime_error(path + ": cannot open");
  std::vector<char> bytes((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  std::vector<T> v(bytes.size() / sizeof(T));
  std::copy(bytes.begin(), bytes.begin() + static_cast<long>(v.size() * sizeof(T)), reinterpret_cast<char*>(v.data()));
  return v;
}

template <typename T>
void write_raw(const std::string& path, const T* data, size_t n) {
  std::ofstream out(path, std::ios::binary);
  out.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(n * sizeof(T)));
  if (!out) throw std::runtime_error(path + ": cannot write");
}

NufftOptions options_from(const char* eps, const char* sigma, const std::string& kernel) {
  NufftOptions o;
  o.epsilon = std::atof(eps);
  o.oversampling = std::atof(sigma);
  const auto k = parse_nufft_kernel(kernel);
  if (!k) throw std::runtime_error("kernel must be es or kb");
  o.kernel = *k;
  return o;
}

int transform(char** argv) {
  const std::string mode = argv[1];
  const Index ny = std::atol(argv[2]), nx = std::atol(argv[3]);
  const NufftOptions o = options_from(argv[4], argv[5], argv[6]);
  const auto pts = read_raw<double>(argv[7]);
  const Index m = static_cast<Index>(pts.size() / 2);
  VecD kx(m), ky(m);
  for (Index j = 0; j < m; ++j) {
    kx[j] = pts[static_cast<size_t>(2 * j)];
    ky[j] = pts[static_cast<size_t>(2 * j + 1)];
  }
  const NufftPlan plan(ny, nx, kx, ky, o);
  const auto in = read_raw<cfloat>(argv[8]);
  if (mode == "forward") {
    if (static_cast<Index>(in.size()) != ny * nx) throw std::runtime_error("image size mismatch");
    std::vector<cfloat> out(static_cast<size_t>(m));
    plan.forward(in.data(), out.data());
    write_raw(argv[9], out.data(), out.size());
  } else {
    if (static_cast<Index>(in.size()) != m) throw std::runtime_error("value count mismatch");
    std::vector<cfloat> out(static_cast<size_t>(ny * nx));
    plan.adjoint(in.data(), out.data());
    write_raw(argv[9], out.data(), out.size());
  }
  std::printf("%s\n", plan.kernel().to_string().c_str());
  return 0;
}

VecC random_vec(Index n, uint64_t seed) {
  Rng rng(seed);
  VecC v(n);
  for (Index i = 0; i < n; ++i) v[i] = cfloat(static_cast<float>(rng.normal()), static_cast<float>(rng.normal()));
  return v;
}

// Best time of `rounds` rounds of `repeats` calls, in ms per call.
template <typename F>
double best_ms(int rounds, int repeats, F&& f) {
  double best = 1e300;
  for (int r = 0; r < rounds; ++r) {
    const auto t0 = Clock::now();
    for (int i = 0; i < repeats; ++i) f();
    best = std::min(best, ms_since(t0) / repeats);
  }
  return best;
}

double raw_fft_ms(Index ny, Index nx, int repeats) {
  const size_t n = static_cast<size_t>(ny * nx);
  fftwf_complex* buf = fftwf_alloc_complex(n);
  fftwf_plan_with_nthreads(fft_threads());
  fftwf_plan p = fftwf_plan_dft_2d(static_cast<int>(ny), static_cast<int>(nx), buf, buf, FFTW_FORWARD, FFTW_MEASURE);
  for (size_t i = 0; i < n; ++i) buf[i][0] = buf[i][1] = 0.0f;
  const double ms = best_ms(7, repeats, [&] { fftwf_execute(p); });
  fftwf_destroy_plan(p);
  fftwf_free(buf);
  return ms;
}

int bench(int argc, char** argv) {
  const Index n = std::atol(argv[2]);
  const int spokes = std::atoi(argv[3]), readout = std::atoi(argv[4]);
  NufftOptions o;
  o.epsilon = std::atof(argv[5]);
  o.oversampling = std::atof(argv[6]);
  const int repeats = std::atoi(argv[7]);
  const int coils = argc > 8 ? std::atoi(argv[8]) : 1;
  const Index m = static_cast<Index>(spokes) * readout;
  VecD kx(m), ky(m);
  const double golden = 3.14159265358979323846 * (std::sqrt(5.0) - 1.0) / 2.0;
  const double dr = static_cast<double>(n) / readout;
  for (int s = 0; s < spokes; ++s)
    for (int i = 0; i < readout; ++i) {
      const double r = (i - readout / 2) * dr;
      kx[s * readout + i] = r * std::cos(s * golden);
      ky[s * readout + i] = r * std::sin(s * golden);
    }
  const auto t0 = Clock::now();
  auto plan = std::make_shared<const NufftPlan>(n, n, kx, ky, o);
  const double plan_ms = ms_since(t0);
  const VecC x = random_vec(n * n, 1);
  VecC y(m), xa(n * n), xn(n * n);
  plan->forward(x.data(), y.data());
  plan->adjoint(y.data(), xa.data());
  const double fwd = best_ms(7, repeats, [&] { plan->forward(x.data(), y.data()); });
  const double adj = best_ms(7, repeats, [&] { plan->adjoint(y.data(), xa.data()); });
  const double both = best_ms(7, repeats, [&] {
    plan->forward(x.data(), y.data());
    plan->adjoint(y.data(), xa.data());
  });
  const auto t1 = Clock::now();
  const ToeplitzNormal toe(*plan);
  const double toe_setup = ms_since(t1);
  toe.apply(x.data(), xn.data());
  const double toe_ms = best_ms(7, repeats, [&] { toe.apply(x.data(), xn.data()); });
  const double fft2x = raw_fft_ms(2 * n, 2 * n, repeats);
  const double gridfft = raw_fft_ms(plan->kernel().grid_ny, plan->kernel().grid_nx, repeats);
  std::printf("n %lld\npoints %lld\nwidth %d\ngrid %lld\nthreads %d\n", static_cast<long long>(n),
              static_cast<long long>(m), plan->kernel().width, static_cast<long long>(plan->kernel().grid_nx),
              fft_threads());
  std::printf("plan_ms %.4f\nforward_ms %.4f\nadjoint_ms %.4f\nfwd_adj_ms %.4f\n", plan_ms, fwd, adj, both);
  std::printf("toeplitz_setup_ms %.4f\ntoeplitz_ms %.4f\nfft2x_ms %.4f\ngrid_fft_ms %.4f\n", toe_setup, toe_ms, fft2x,
              gridfft);
  if (coils > 1) {
    CoilArrayOptions c;
    c.coils = coils;
    const SenseNufft e(plan, synthetic_coil_maps(c, n, n));
    e.normal(x, xn);
    const double sn = best_ms(5, std::max(1, repeats / 4), [&] { e.normal(x, xn); });
    VecC yc;
    e.apply(x, yc);
    const double sa = best_ms(5, std::max(1, repeats / 4), [&] {
      e.apply(x, yc);
      e.adjoint(yc, xa);
    });
    std::printf("coils %d\nsense_normal_ms %.4f\nsense_fwd_adj_ms %.4f\n", coils, sn, sa);
  }
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  try {
    const char* env = std::getenv("RECOFOLD_FFT_THREADS");
    recofold::set_fft_threads(env ? std::atoi(env) : 1);
    const std::string mode = argc > 1 ? argv[1] : "";
    if ((mode == "forward" || mode == "adjoint") && argc == 10) return transform(argv);
    if (mode == "bench" && (argc == 8 || argc == 9)) return bench(argc, argv);
  } catch (const std::exception& e) {
    std::cerr << e.what() << "\n";
    return 2;
  }
  std::cerr << "usage: ops_nufft_tool forward|adjoint NY NX EPS SIGMA KERNEL POINTS IN OUT | "
               "bench N SPOKES READOUT EPS SIGMA REPEATS [COILS]\n";
  return 2;
}
