// SPDX-License-Identifier: Apache-2.0
// Raw-data files for the tests, written with libismrmrd itself: a small valid
// Cartesian dataset with known sample values, and the malformed variants the
// importer must refuse. Used by tests/unit/io_ismrmrd_test.cc and
// tests/tools/io_ismrmrd_tool.cc (which the CLI tests drive).
#pragma once

#include <ismrmrd/dataset.h>
#include <ismrmrd/ismrmrd.h>
#include <ismrmrd/version.h>
#include <ismrmrd/xml.h>

#include <cmath>
#include <complex>
#include <cstdio>
#include <sstream>
#include <string>
#include <vector>

namespace recofold_test {

struct RawSpec {
  int coils = 4;
  int ny = 16;              // encoded lines
  int nx = 16;              // reconstruction columns
  int oversampling = 1;     // readout samples = oversampling * nx
  int slices = 1;
  int averages = 1;
  int noise_scans = 0;      // noise-adjust acquisitions (before the imaging lines)
  int navigators = 0;       // navigator lines (skipped)
  int center_line = -1;     // encoding limit center of step 1 (-1: ny/2)
  int limit_max = -1;       // encoding limit maximum of step 1 (-1: ny-1)
  int coils_of_line5 = -1;  // a different channel count on the 6th imaging line (mixed coils)
  bool write_header = true;
  bool write_lines = true;
  bool shuffle = true;      // write lines in a scrambled order
  ISMRMRD::TrajectoryType trajectory = ISMRMRD::TrajectoryType::CARTESIAN;
  int matrix_z = 1;
  double noise_sigma = 0.0;  // per part, added to imaging lines (deterministic pseudo-random)
};

// The value every test expects at encoded sample (line e1, readout sample s)
// of coil c, slice z, average a: distinct for every index.
inline std::complex<float> sample_value(int c, int e1, int s, int z, int a) {
  return {static_cast<float>(std::sin(0.37 * c + 0.11 * e1 + 0.05 * s + 0.7 * z) + 0.25 * a),
          static_cast<float>(std::cos(0.21 * c - 0.13 * e1 + 0.03 * s - 0.4 * z) - 0.5 * a)};
}

// Small deterministic Gaussian-ish generator (sum of uniforms), for noise scans.
struct TestNoise {
  uint64_t state = 88172645463325252ull;
  double uniform() {
    state ^= state << 13;
    state ^= state >> 7;
    state ^= state << 17;
    return static_cast<double>(state >> 11) * (1.0 / 9007199254740992.0);
  }
  double normal() {
    double s = 0;
    for (int i = 0; i < 12; ++i) s += uniform();
    return s - 6.0;
  }
};

inline std::string header_xml(const RawSpec& r) {
  ISMRMRD::IsmrmrdHeader h;
  h.version = ISMRMRD_XMLHDR_VERSION;
  h.experimentalConditions.H1resonanceFrequency_Hz = 63500000;
  ISMRMRD::AcquisitionSystemInformation sys;
  sys.receiverChannels = static_cast<unsigned short>(r.coils);
  sys.systemVendor = std::string("test vendor");
  h.acquisitionSystemInformation = sys;
  ISMRMRD::Encoding e;
  const int ex = r.nx * r.oversampling;
  e.encodedSpace.matrixSize = ISMRMRD::MatrixSize(static_cast<unsigned short>(ex), static_cast<unsigned short>(r.ny),
                                                  static_cast<unsigned short>(r.matrix_z));
  e.encodedSpace.fieldOfView_mm = ISMRMRD::FieldOfView_mm{static_cast<float>(2.0 * ex), static_cast<float>(2.0 * r.ny), 5};
  e.reconSpace.matrixSize = ISMRMRD::MatrixSize(static_cast<unsigned short>(r.nx), static_cast<unsigned short>(r.ny), 1);
  e.reconSpace.fieldOfView_mm = ISMRMRD::FieldOfView_mm{static_cast<float>(2.0 * r.nx), static_cast<float>(2.0 * r.ny), 5};
  const int center = r.center_line >= 0 ? r.center_line : r.ny / 2;
  const int maximum = r.limit_max >= 0 ? r.limit_max : r.ny - 1;
  e.encodingLimits.kspace_encoding_step_1 =
      ISMRMRD::Limit(0, static_cast<unsigned short>(maximum), static_cast<unsigned short>(center));
  e.encodingLimits.slice = ISMRMRD::Limit(0, static_cast<unsigned short>(r.slices - 1), 0);
  e.encodingLimits.average = ISMRMRD::Limit(0, static_cast<unsigned short>(r.averages - 1), 0);
  e.trajectory = r.trajectory;
  h.encoding.push_back(e);
  std::ostringstream s;
  ISMRMRD::serialize(h, s);
  return s.str();
}

inline void set_flag(ISMRMRD::Acquisition& a, int bit) { a.setFlag(static_cast<uint64_t>(bit)); }

// The packed header's floats are not 4-byte aligned: set them on a copy of the header.
inline void set_sample_time_us(ISMRMRD::Acquisition& a, float us) {
  ISMRMRD::AcquisitionHeader h = a.getHead();
  h.sample_time_us = us;
  a.setHead(h);
}

// Writes `r` to `path` (replacing it).
inline void write_raw(const std::string& path, const RawSpec& r) {
  std::remove(path.c_str());
  ISMRMRD::Dataset d(path.c_str(), "dataset", true);
  if (r.write_header) d.writeHeader(header_xml(r));
  if (!r.write_lines) return;
  const int ex = r.nx * r.oversampling;
  TestNoise noise;
  for (int i = 0; i < r.noise_scans; ++i) {
    ISMRMRD::Acquisition a(static_cast<uint16_t>(ex), static_cast<uint16_t>(r.coils));
    set_flag(a, ISMRMRD::ISMRMRD_ACQ_IS_NOISE_MEASUREMENT);
    set_sample_time_us(a, 5.0f);
    // Correlated noise: channel c = n_c + 0.5 n_{c-1}, unit std per part of n.
    std::vector<std::complex<float>> prev(static_cast<size_t>(ex));
    for (int c = 0; c < r.coils; ++c)
      for (int s = 0; s < ex; ++s) {
        const std::complex<float> v(static_cast<float>(noise.normal()), static_cast<float>(noise.normal()));
        a.data(static_cast<uint16_t>(s), static_cast<uint16_t>(c)) = v + (c > 0 ? 0.5f * prev[static_cast<size_t>(s)] : 0.0f);
        prev[static_cast<size_t>(s)] = v;
      }
    d.appendAcquisition(a);
  }
  std::vector<int> order;
  for (int e1 = 0; e1 < r.ny; ++e1) order.push_back(e1);
  if (r.shuffle)
    for (int i = 0; i < r.ny; ++i) std::swap(order[static_cast<size_t>(i)], order[static_cast<size_t>((i * 7 + 3) % r.ny)]);
  int line_no = 0;
  const int center = r.center_line >= 0 ? r.center_line : r.ny / 2;
  for (int z = 0; z < r.slices; ++z)
    for (int av = 0; av < r.averages; ++av)
      for (int k = 0; k < r.ny; ++k) {
        const int e1 = order[static_cast<size_t>(k)];
        if (r.navigators > 0 && k < r.navigators) {
          ISMRMRD::Acquisition nav(static_cast<uint16_t>(ex), static_cast<uint16_t>(r.coils));
          set_flag(nav, ISMRMRD::ISMRMRD_ACQ_IS_NAVIGATION_DATA);
          nav.idx().kspace_encode_step_1 = static_cast<uint16_t>(center);
          nav.idx().slice = static_cast<uint16_t>(z);
          for (int c = 0; c < r.coils; ++c)
            for (int s = 0; s < ex; ++s) nav.data(static_cast<uint16_t>(s), static_cast<uint16_t>(c)) = {1e3f, -1e3f};
          d.appendAcquisition(nav);
        }
        const int channels = (line_no == 5 && r.coils_of_line5 > 0) ? r.coils_of_line5 : r.coils;
        ISMRMRD::Acquisition a(static_cast<uint16_t>(ex), static_cast<uint16_t>(channels));
        a.center_sample() = static_cast<uint16_t>(ex / 2);
        set_sample_time_us(a, 5.0f);
        a.idx().kspace_encode_step_1 = static_cast<uint16_t>(e1);
        a.idx().slice = static_cast<uint16_t>(z);
        a.idx().average = static_cast<uint16_t>(av);
        for (int c = 0; c < channels; ++c)
          for (int s = 0; s < ex; ++s) {
            std::complex<float> v = sample_value(c, e1, s, z, av);
            if (r.noise_sigma > 0)
              v += std::complex<float>(static_cast<float>(r.noise_sigma * noise.normal()),
                                       static_cast<float>(r.noise_sigma * noise.normal()));
            a.data(static_cast<uint16_t>(s), static_cast<uint16_t>(c)) = v;
          }
        d.appendAcquisition(a);
        ++line_no;
      }
}

}  // namespace recofold_test
