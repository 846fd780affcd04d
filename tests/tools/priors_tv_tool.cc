// SPDX-License-Identifier: Apache-2.0
// Helper for tests/reference/priors_tv_skimage.py: TV prox of a real image from a raw float32 file.
//
// Usage: priors_tv_tool iso|aniso NY NX THETA ITERATIONS IN.raw OUT.raw
// Computes argmin_u 1/2||u - v||^2 + THETA * TV(u) (TvPrior with weight THETA,
// step 1, Neumann boundary, ITERATIONS inner FGP steps, tolerance 0). IN and
// OUT hold NY*NX float32 values, row-major, native byte order. Exit 2 on bad input.
#include <cstdlib>
#include <exception>
#include <fstream>
#include <iostream>
#include <string>
#include <vector>

#include "recofold/priors/tv.h"

int main(int argc, char** argv) {
  using namespace recofold;
  if (argc != 8) {
    std::cerr << "usage: priors_tv_tool iso|aniso NY NX THETA ITERATIONS IN.raw OUT.raw\n";
    return 2;
  }
  try {
    const std::string kind = argv[1];
    if (kind != "iso" && kind != "aniso") {
      std::cerr << "first argument must be iso or aniso\n";
      return 2;
    }
    const Index ny = std::atol(argv[2]), nx = std::atol(argv[3]);
    TvOptions o;
    o.isotropic = kind == "iso";
    o.max_iterations = std::atoi(argv[5]);
    o.tolerance = 0.0;
    TvPrior tv(Shape{ny, nx}, std::atof(argv[4]), o);
    std::vector<float> buf(static_cast<size_t>(ny * nx));
    std::ifstream f(argv[6], std::ios::binary);
    f.read(reinterpret_cast<char*>(buf.data()), static_cast<std::streamsize>(sizeof(float) * buf.size()));
    if (!f) {
      std::cerr << argv[6] << ": cannot read " << buf.size() << " float32 values\n";
      return 2;
    }
    VecC v(ny * nx), u;
    for (Index i = 0; i < v.size(); ++i) v[i] = cfloat(buf[static_cast<size_t>(i)], 0.f);
    tv.prox(v, 1.0, u);
    for (Index i = 0; i < u.size(); ++i) buf[static_cast<size_t>(i)] = u[i].real();
    std::ofstream o_file(argv[7], std::ios::binary);
    o_file.write(reinterpret_cast<const char*>(buf.data()), static_cast<std::streamsize>(sizeof(float) * buf.size()));
    if (!o_file) {
      std::cerr << argv[7] << ": write failed\n";
      return 2;
    }
  } catch (const std::exception& e) {
    std::cerr << e.what() << "\n";
    return 2;
  }
  return 0;
}
