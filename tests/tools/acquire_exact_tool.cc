// SPDX-License-Identifier: Apache-2.0
// Helper for tests/reference/acquire_radial_scipy.py: exact k-space of a phantom table at given points.
//
//   acquire_exact_tool TABLE NY NX POINTS OUT
//       POINTS: M pairs (kx, ky) of float64, cycles per FOV; OUT: M complex64 values of
//       exact_kspace_at_points (one coil, S = 1).
// Exit 2 with a message on bad input.
#include <fstream>
#include <iostream>
#include <string>
#include <vector>

#include "recofold/acquire/exact_kspace.h"
#include "recofold/phantom/phantom_table.h"

int main(int argc, char** argv) {
  using namespace recofold;
  if (argc != 6) {
    std::cerr << "usage: acquire_exact_tool TABLE NY NX POINTS OUT\n";
    return 2;
  }
  try {
    const Phantom p = load_phantom_table(argv[1]);
    const Index ny = std::atol(argv[2]), nx = std::atol(argv[3]);
    std::ifstream in(argv[4], std::ios::binary);
    std::vector<char> bytes((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
    const Index m = static_cast<Index>(bytes.size() / (2 * sizeof(double)));
    const double* d = reinterpret_cast<const double*>(bytes.data());
    VecD kx(m), ky(m);
    for (Index j = 0; j < m; ++j) {
      kx[j] = d[2 * j];
      ky[j] = d[2 * j + 1];
    }
    const NdArray<cfloat> y = exact_kspace_at_points(p, ny, nx, kx, ky);
    std::ofstream out(argv[5], std::ios::binary);
    out.write(reinterpret_cast<const char*>(y.ptr()), static_cast<std::streamsize>(sizeof(cfloat) * y.data.size()));
    return out ? 0 : 2;
  } catch (const std::exception& e) {
    std::cerr << e.what() << "\n";
    return 2;
  }
}
