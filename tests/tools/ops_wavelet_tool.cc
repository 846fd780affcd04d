// SPDX-License-Identifier: Apache-2.0
// Helper for tests/reference/ops_wavelet_pywt.py: runs WaveletTransform on raw complex64 files.
//
// Usage: ops_wavelet_tool forward|inverse WAVELET LEVELS NY NX IN.raw OUT.raw
// IN and OUT hold NY*NX complex numbers as interleaved float32 (re, im),
// row-major, native byte order; OUT gets the packed coefficients (forward) or
// the image (inverse). Exit 0 on success, 2 on bad arguments or files.
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <fstream>
#include <iostream>
#include <string>

#include "recofold/core/error.h"
#include "recofold/ops/wavelet.h"

int main(int argc, char** argv) {
  using namespace recofold;
  if (argc != 8) {
    std::cerr << "usage: ops_wavelet_tool forward|inverse WAVELET LEVELS NY NX IN.raw OUT.raw\n";
    return 2;
  }
  try {
    const std::string mode = argv[1];
    const auto family = parse_wavelet(argv[2]);
    if (!family || (mode != "forward" && mode != "inverse")) {
      std::cerr << "bad mode or wavelet (accepted: " << accepted_wavelets() << ")\n";
      return 2;
    }
    const int levels = std::atoi(argv[3]);
    const Index ny = std::atol(argv[4]), nx = std::atol(argv[5]);
    WaveletTransform w(Shape{ny, nx}, *family, levels);
    VecC in(ny * nx);
    std::ifstream f(argv[6], std::ios::binary);
    f.read(reinterpret_cast<char*>(in.data()), static_cast<std::streamsize>(sizeof(cfloat) * in.size()));
    if (!f) {
      std::cerr << argv[6] << ": cannot read " << in.size() << " complex64 values\n";
      return 2;
    }
    VecC out;
    if (mode == "forward")
      w.apply(in, out);
    else
      w.adjoint(in, out);
    std::ofstream o(argv[7], std::ios::binary);
    o.write(reinterpret_cast<const char*>(out.data()), static_cast<std::streamsize>(sizeof(cfloat) * out.size()));
    if (!o) {
      std::cerr << argv[7] << ": write failed\n";
      return 2;
    }
  } catch (const std::exception& e) {
    std::cerr << e.what() << "\n";
    return 2;
  }
  return 0;
}
