// SPDX-License-Identifier: Apache-2.0
// Helper for tests/reference/phantom_*.py: evaluates a phantom table and writes raw little-endian arrays.
//
//   phantom_probe raster TABLE NY NX OUT     complex64 [NY, NX]  (rasterize)
//   phantom_probe kspace TABLE NY NX OUT     complex64 [NY, NX]  (kspace_on_grid)
//   phantom_probe points TABLE IN OUT        IN float64 pairs (kx, ky) -> complex128 F (fourier_transform)
//   phantom_probe rays TABLE IN OUT          IN float64 pairs (theta, t) -> complex128 (line_integrals)
// Exit 2 with a message on bad input.
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <iostream>
#include <string>
#include <vector>

#include "recofold/core/error.h"
#include "recofold/phantom/fourier.h"
#include "recofold/phantom/line_integral.h"
#include "recofold/phantom/phantom_table.h"
#include "recofold/phantom/raster.h"

namespace {

std::vector<double> read_doubles(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw recofold::InputError(path, "", "cannot open");
  std::vector<char> bytes((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  std::vector<double> v(bytes.size() / sizeof(double));
  std::copy(bytes.begin(), bytes.begin() + static_cast<long>(v.size() * sizeof(double)), reinterpret_cast<char*>(v.data()));
  return v;
}

template <typename T>
void write_raw(const std::string& path, const T* data, size_t n) {
  std::ofstream out(path, std::ios::binary);
  out.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(n * sizeof(T)));
  if (!out) throw recofold::WorkError("cannot write " + path);
}

int usage() {
  std::cerr << "usage: phantom_probe raster|kspace TABLE NY NX OUT | points|rays TABLE IN OUT\n";
  return 2;
}

}  // namespace

int main(int argc, char** argv) {
  using namespace recofold;
  if (argc < 5) return usage();
  const std::string mode = argv[1];
  try {
    const Phantom p = load_phantom_table(argv[2]);
    if ((mode == "raster" || mode == "kspace") && argc == 6) {
      const int ny = std::atoi(argv[3]), nx = std::atoi(argv[4]);
      if (ny < 1 || nx < 1) return usage();
      const ImageC img = mode == "raster" ? rasterize(p, ny, nx) : kspace_on_grid(p, ny, nx);
      write_raw(argv[5], img.data(), static_cast<size_t>(img.size()));
      return 0;
    }
    if ((mode == "points" || mode == "rays") && argc == 5) {
      const std::vector<double> in = read_doubles(argv[3]);
      const Index n = static_cast<Index>(in.size() / 2);
      VecD a(n), b(n);
      for (Index i = 0; i < n; ++i) {
        a[i] = in[2 * static_cast<size_t>(i)];
        b[i] = in[2 * static_cast<size_t>(i) + 1];
      }
      const Eigen::VectorXcd out = mode == "points" ? fourier_transform(p, a, b) : line_integrals(p, a, b);
      write_raw(argv[4], out.data(), static_cast<size_t>(out.size()));
      return 0;
    }
    return usage();
  } catch (const InputError& e) {
    std::cerr << "phantom_probe: " << e.what() << "\n";
    return 2;
  } catch (const Error& e) {
    std::cerr << "phantom_probe: " << e.what() << "\n";
    return 1;
  }
}
