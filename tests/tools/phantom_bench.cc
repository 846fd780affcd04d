// SPDX-License-Identifier: Apache-2.0
// Timings of the phantom module (bench/README.md): exact k-space, exact sinogram, family rasters.
//
// Usage: phantom_bench [threads]   (default 2). Prints one line per case with
// the best wall-clock time of several runs and that run's CPU time (all
// threads), in milliseconds.
#include <omp.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <ctime>
#include <functional>
#include <string>

#include "recofold/phantom/family.h"
#include "recofold/phantom/fourier.h"
#include "recofold/phantom/line_integral.h"
#include "recofold/phantom/phantom_table.h"
#include "recofold/phantom/raster.h"

namespace {

// Best wall-clock time of `runs` runs, in ms; *cpu_ms gets the process CPU
// time (all threads) of that run, which is less disturbed by other load.
double best_ms(int runs, const std::function<void()>& f, double* cpu_ms) {
  double best = 1e300;
  for (int i = 0; i < runs; ++i) {
    const std::clock_t c0 = std::clock();
    const auto t0 = std::chrono::steady_clock::now();
    f();
    const auto t1 = std::chrono::steady_clock::now();
    const std::clock_t c1 = std::clock();
    const double wall = std::chrono::duration<double, std::milli>(t1 - t0).count();
    if (wall < best) {
      best = wall;
      *cpu_ms = 1000.0 * static_cast<double>(c1 - c0) / CLOCKS_PER_SEC;
    }
  }
  return best;
}

std::string source_dir() {
  if (const char* env = std::getenv("RECOFOLD_SOURCE_DIR")) return env;
  const std::string here = __FILE__;
  return here.substr(0, here.rfind("/tests/tools/"));
}

}  // namespace

int main(int argc, char** argv) {
  using namespace recofold;
  const int threads = argc > 1 ? std::atoi(argv[1]) : 2;
  omp_set_num_threads(threads);
  const Phantom head = load_phantom_table(source_dir() + "/phantoms/shepp-logan-modified.toml");
  std::printf("phantom_bench, %d threads\n", threads);

  volatile double sink = 0.0;
  double cpu = 0.0;
  double ms = best_ms(10, [&] { sink = sink + std::abs(kspace_on_grid(head, 256, 256)(3, 3)); }, &cpu);
  std::printf("exact k-space, head phantom, 256x256 Cartesian grid (kspace_on_grid): %.1f ms wall, %.1f ms cpu\n", ms, cpu);

  VecD kx(256 * 256), ky(256 * 256);
  for (int u = 0; u < 256; ++u)
    for (int v = 0; v < 256; ++v) {
      kx[u * 256 + v] = grid_frequency(v, 256);
      ky[u * 256 + v] = -grid_frequency(u, 256);
    }
  ms = best_ms(10, [&] { sink = sink + std::abs(fourier_transform(head, kx, ky)[5]); }, &cpu);
  std::printf("exact k-space, head phantom, 65536 arbitrary points (fourier_transform): %.1f ms wall, %.1f ms cpu\n", ms, cpu);

  std::vector<double> angles(360), offsets(256);
  for (int i = 0; i < 360; ++i) angles[i] = i * 3.14159265358979323846 / 360.0;
  for (int j = 0; j < 256; ++j) offsets[j] = -1.0 + (2.0 * j + 1.0) / 256.0;
  ms = best_ms(10, [&] { sink = sink + parallel_sinogram(head, angles, offsets)(7, 100); }, &cpu);
  std::printf("exact sinogram, head phantom, 360 angles x 256 detectors (parallel_sinogram): %.1f ms wall, %.1f ms cpu\n", ms, cpu);

  ms = best_ms(5, [&] { sink = sink + rasterize(head, 256, 256)(128, 128).real(); }, &cpu);
  std::printf("raster, head phantom, 256x256: %.1f ms wall, %.1f ms cpu\n", ms, cpu);
  ms = best_ms(2, [&] { sink = sink + rasterize(head, 2048, 2048)(128, 128).real(); }, &cpu);
  std::printf("raster, head phantom, 2048x2048: %.1f ms wall, %.1f ms cpu\n", ms, cpu);

  const FamilyOptions textured = family_options(Family::kTextured);
  std::vector<Phantom> objects;
  ms = best_ms(3, [&] { objects = make_family(textured, 1, 1000); }, &cpu);
  std::printf("family 'textured', 1000 objects drawn: %.1f ms wall, %.1f ms cpu\n", ms, cpu);
  ms = best_ms(1, [&] { sink = sink + rasterize_stack(objects, 128, 128).data[77].real(); }, &cpu);
  std::printf("family 'textured', 1000 objects rastered at 128x128: %.1f ms wall, %.1f ms cpu\n", ms, cpu);
  return 0;
}
