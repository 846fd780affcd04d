// SPDX-License-Identifier: Apache-2.0
// Helper for CT reference checks and benchmarks: Joseph projection / FBP on .npy files, and timings.
//
//   recon_ct_tool project  IMAGE.npy ANGLES.txt DETECTORS OUT.npy        sinogram [views, detectors]
//   recon_ct_tool backproject SINO.npy ANGLES.txt NY NX OUT.npy          Joseph transpose
//   recon_ct_tool fbp SINO.npy ANGLES.txt NY NX FILTER OUT.npy           parallel-beam FBP
//   recon_ct_tool bench N VIEWS REPEATS                                  JSON timings (seconds)
// Geometry: parallel beam, 1 mm pixels, detector spacing 1 mm, no offset
// (ct_geometry.h). ANGLES.txt holds degrees, one per line. .npy files are
// little-endian float32, C order, 2-D (read and written here, no numpy needed).
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <ctime>
#include <fstream>
#include <functional>
#include <iostream>
#include <sstream>
#include <string>
#include <vector>

#include "recofold/ops/ct_geometry.h"
#include "recofold/ops/joseph_projector.h"
#include "recofold/recon/fbp.h"

namespace {

using recofold::Index;

struct Array2 {
  Index rows = 0, cols = 0;
  std::vector<float> data;
};

Array2 read_npy(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw std::runtime_error("cannot open " + path);
  char magic[8];
  in.read(magic, 8);
  if (std::string(magic + 1, 5) != "NUMPY") throw std::runtime_error(path + ": not an .npy file");
  size_t header_len = 0;
  if (magic[6] == 1) {
    unsigned char b[2];
    in.read(reinterpret_cast<char*>(b), 2);
    header_len = b[0] | (size_t(b[1]) << 8);
  } else {
    unsigned char b[4];
    in.read(reinterpret_cast<char*>(b), 4);
    header_len = b[0] | (size_t(b[1]) << 8) | (size_t(b[2]) << 16) | (size_t(b[3]) << 24);
  }
  std::string header(header_len, ' ');
  in.read(header.data(), static_cast<std::streamsize>(header_len));
  if (header.find("'<f4'") == std::string::npos || header.find("'fortran_order': False") == std::string::npos)
    throw std::runtime_error(path + ": need little-endian float32 in C order");
  const auto open = header.find('(', header.find("shape")), close = header.find(')', open);
  std::istringstream dims(header.substr(open + 1, close - open - 1));
  Array2 a;
  char comma;
  dims >> a.rows >> comma >> a.cols;
  a.data.resize(static_cast<size_t>(a.rows * a.cols));
  in.read(reinterpret_cast<char*>(a.data.data()), static_cast<std::streamsize>(a.data.size() * sizeof(float)));
  if (!in) throw std::runtime_error(path + ": truncated");
  return a;
}

void write_npy(const std::string& path, Index rows, Index cols, const float* data) {
  std::string header = "{'descr': '<f4', 'fortran_order': False, 'shape': (" + std::to_string(rows) + ", " +
                       std::to_string(cols) + "), }";
  while ((10 + header.size() + 1) % 64 != 0) header += ' ';
  header += '\n';
  std::ofstream out(path, std::ios::binary);
  out.write("\x93NUMPY\x01\x00", 8);
  const unsigned char len[2] = {static_cast<unsigned char>(header.size() & 0xff),
                                static_cast<unsigned char>(header.size() >> 8)};
  out.write(reinterpret_cast<const char*>(len), 2);
  out.write(header.data(), static_cast<std::streamsize>(header.size()));
  out.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(rows * cols * sizeof(float)));
  if (!out) throw std::runtime_error("cannot write " + path);
}

std::vector<double> read_angles(const std::string& path) {
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open " + path);
  std::vector<double> a;
  double v;
  while (in >> v) a.push_back(v * M_PI / 180.0);
  return a;
}

recofold::CtGeometry parallel(Index ny, Index nx, std::vector<double> angles, Index detectors) {
  recofold::CtGeometry g;
  g.ny = ny;
  g.nx = nx;
  g.angles_rad = std::move(angles);
  g.detector_count = detectors;
  return g;
}

// Best wall-clock time of `repeats` runs; `cpu` gets the process CPU time of
// that run (all threads), which shows how much a loaded machine stretched it.
double seconds_of(const std::function<void()>& f, int repeats, double* cpu = nullptr) {
  double best = 1e300;
  for (int r = 0; r < repeats; ++r) {
    const std::clock_t c0 = std::clock();
    const auto t0 = std::chrono::steady_clock::now();
    f();
    const double t = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    if (t < best) {
      best = t;
      if (cpu) *cpu = double(std::clock() - c0) / CLOCKS_PER_SEC;
    }
  }
  return best;
}

int run(int argc, char** argv) {
  if (argc < 2) throw std::runtime_error("usage: see the file header");
  const std::string cmd = argv[1];
  if (cmd == "project" && argc == 6) {
    const Array2 img = read_npy(argv[2]);
    recofold::JosephProjector a(parallel(img.rows, img.cols, read_angles(argv[3]), std::atol(argv[4])));
    std::vector<float> s(static_cast<size_t>(a.range_size()));
    a.project(img.data.data(), s.data());
    write_npy(argv[5], a.geometry().view_count(), a.geometry().detector_count, s.data());
    return 0;
  }
  if (cmd == "backproject" && argc == 7) {
    const Array2 s = read_npy(argv[2]);
    recofold::JosephProjector a(parallel(std::atol(argv[4]), std::atol(argv[5]), read_angles(argv[3]), s.cols));
    std::vector<float> img(static_cast<size_t>(a.domain_size()));
    a.back_project(s.data.data(), img.data());
    write_npy(argv[6], a.geometry().ny, a.geometry().nx, img.data());
    return 0;
  }
  if (cmd == "fbp" && argc == 8) {
    const Array2 s = read_npy(argv[2]);
    const auto g = parallel(std::atol(argv[4]), std::atol(argv[5]), read_angles(argv[3]), s.cols);
    recofold::FbpOptions o;
    const auto f = recofold::parse_fbp_filter(argv[6]);
    if (!f) throw std::runtime_error(std::string("unknown filter ") + argv[6]);
    o.filter = *f;
    const recofold::ImageF img = recofold::fbp(g, s.data.data(), o);
    write_npy(argv[7], img.rows(), img.cols(), img.data());
    return 0;
  }
  if (cmd == "bench" && argc == 5) {
    const Index n = std::atol(argv[2]);
    const int views = std::atoi(argv[3]), repeats = std::atoi(argv[4]);
    std::vector<double> angles(static_cast<size_t>(views));
    for (int i = 0; i < views; ++i) angles[static_cast<size_t>(i)] = M_PI * i / views;
    const auto g = parallel(n, n, angles, n);  // like radon(circle=True): n detectors
    const double t_setup = seconds_of([&] { recofold::JosephProjector tmp(g); }, repeats);
    recofold::JosephProjector a(g);
    std::vector<float> img(static_cast<size_t>(n * n), 1.0f), s(static_cast<size_t>(a.range_size()));
    double c_fp = 0, c_bp = 0, c_fbp = 0;
    const double t_fp = seconds_of([&] { a.project(img.data(), s.data()); }, repeats, &c_fp);
    const double t_bp = seconds_of([&] { a.back_project(s.data(), img.data()); }, repeats, &c_bp);
    const double t_fbp = seconds_of([&] { recofold::fbp(g, s.data(), recofold::FbpOptions{}); }, repeats, &c_fbp);
    std::cout << "{\"n\": " << n << ", \"views\": " << views << ", \"setup_s\": " << t_setup
              << ", \"project_s\": " << t_fp << ", \"backproject_s\": " << t_bp << ", \"fbp_s\": " << t_fbp
              << ", \"project_cpu_s\": " << c_fp << ", \"backproject_cpu_s\": " << c_bp << ", \"fbp_cpu_s\": " << c_fbp
              << "}\n";
    return 0;
  }
  throw std::runtime_error("bad arguments for '" + cmd + "'; see the file header");
}

}  // namespace

int main(int argc, char** argv) {
  try {
    return run(argc, argv);
  } catch (const std::exception& e) {
    std::cerr << "recon_ct_tool: " << e.what() << "\n";
    return 1;
  }
}
