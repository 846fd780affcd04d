// SPDX-License-Identifier: Apache-2.0
// Test helper: writes recofold files from raw little-endian float32 / complex64 input (numpy tofile()).
//   io_write_tool image RAW NY NX COMPLEX(0|1) DY DX OUT   image file (.h5) or any export format
//   io_write_tool mri RAW COILS NY NX OUT                  MRI measurement; RAW = complex64 k-space
//   io_write_tool ct RAW VIEWS DETECTORS OUT               CT measurement; RAW = float32 sinogram
// The fixed extras (mask, coil maps, angles, table, provenance) are documented in
// tests/reference/io_h5py_nibabel.py, which checks them.
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <string>
#include <vector>

#include "recofold/core/error.h"
#include "recofold/io/image_export.h"
#include "recofold/io/measurement_file.h"

namespace {

template <typename T>
std::vector<T> read_raw(const std::string& path, size_t count) {
  std::ifstream in(path, std::ios::binary);
  std::vector<T> v(count);
  in.read(reinterpret_cast<char*>(v.data()), static_cast<std::streamsize>(count * sizeof(T)));
  if (!in) throw recofold::InputError(path, "", "cannot read " + std::to_string(count) + " values");
  return v;
}

long arg_int(const char* s) { return std::strtol(s, nullptr, 10); }

}  // namespace

int main(int argc, char** argv) {
  using namespace recofold;
  const std::string mode = argc > 1 ? argv[1] : "";
  try {
    if (mode == "image" && argc == 9) {
      const Index ny = arg_int(argv[3]), nx = arg_int(argv[4]);
      const bool cplx = arg_int(argv[5]) != 0;
      ImageRecord rec;
      rec.is_complex = cplx;
      rec.pixels = NdArray<cfloat>(Shape{ny, nx});
      if (cplx)
        rec.pixels.data = read_raw<cfloat>(argv[2], static_cast<size_t>(ny * nx));
      else {
        const auto re = read_raw<float>(argv[2], static_cast<size_t>(ny * nx));
        for (size_t i = 0; i < re.size(); ++i) rec.pixels.data[i] = cfloat(re[i], 0.f);
      }
      rec.pixel_spacing_mm[0] = std::strtod(argv[6], nullptr);
      rec.pixel_spacing_mm[1] = std::strtod(argv[7], nullptr);
      rec.description = "io_write_tool image";
      rec.text_attrs["units"] = "a.u.";
      rec.number_attrs["fov_mm"] = 100.0;
      Table t;
      t.columns = {"a", "b", "c"};
      t.rows = NdArray<double>(Shape{2, 3});
      t.rows.data = {1, 2, 3, 4, 5, 6};
      rec.tables["/phantom/components"] = t;
      Provenance prov;
      prov.command = "io_write_tool image";
      prov.extra["seed"] = "123";
      write_image_any(argv[8], rec, prov, PngWindow{});
      return 0;
    }
    if (mode == "mri" && argc == 7) {
      const Index coils = arg_int(argv[3]), ny = arg_int(argv[4]), nx = arg_int(argv[5]);
      Measurement m;
      m.modality = Modality::kMri;
      m.ny = ny;
      m.nx = nx;
      MriData d;
      d.kspace = NdArray<cfloat>(Shape{coils, ny, nx});
      d.kspace.data = read_raw<cfloat>(argv[2], static_cast<size_t>(coils * ny * nx));
      d.mask = NdArray<uint8_t>(Shape{ny, nx});
      for (Index y = 0; y < ny; ++y)
        for (Index x = 0; x < nx; ++x) d.mask.data[static_cast<size_t>(y * nx + x)] = y % 2 == 0 ? 1 : 0;
      d.coil_maps = NdArray<cfloat>(Shape{coils, ny, nx}, cfloat(1.f, 0.f));
      d.noise_sigma = 0.25;
      d.pattern = "lines-uniform";
      d.acceleration = 2.0;
      m.mri = d;
      m.truth = NdArray<cfloat>(Shape{ny, nx}, cfloat(1.f, -1.f));
      m.truth_is_complex = true;
      m.truth_kind = "discrete";
      m.provenance.command = "io_write_tool mri";
      write_measurement_file(argv[6], m);
      return 0;
    }
    if (mode == "ct" && argc == 6) {
      const Index views = arg_int(argv[3]), dets = arg_int(argv[4]);
      Measurement m;
      m.modality = Modality::kCt;
      m.ny = m.nx = dets;
      CtData d;
      d.sinogram = NdArray<float>(Shape{views, dets});
      d.sinogram.data = read_raw<float>(argv[2], static_cast<size_t>(views * dets));
      for (Index v = 0; v < views; ++v) d.angles_rad.push_back(M_PI * static_cast<double>(v) / views);
      d.beam = CtBeam::kParallel;
      d.detector_count = dets;
      d.photons_per_ray = 1e5;
      m.ct = d;
      m.provenance.command = "io_write_tool ct";
      write_measurement_file(argv[5], m);
      return 0;
    }
    std::fprintf(stderr, "usage: see the comment at the top of tests/tools/io_write_tool.cc\n");
    return 2;
  } catch (const InputError& e) {
    std::fprintf(stderr, "%s\n", e.what());
    return 2;
  } catch (const Error& e) {
    std::fprintf(stderr, "%s\n", e.what());
    return 1;
  }
}
