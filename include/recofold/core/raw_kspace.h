// SPDX-License-Identifier: Apache-2.0
// Raw Cartesian k-space of one 2-D slice as a scanner stored it (filled by io/ismrmrd_file.h,
// turned into a measurement by acquire/raw_import.h).
#pragma once

#include <cstdint>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "recofold/core/types.h"

namespace recofold {

// Cartesian raw k-space of one 2-D slice on the encoded grid, as stored
// (readout oversampling kept, no pre-whitening), with what the
// measurement assembly of acquire/raw_import.h needs.
struct RawCartesian {
  NdArray<cfloat> kspace;    // [coils, ey, ex]; zero where not sampled
  NdArray<uint8_t> sampled;  // [ey, ex]; 1 = at least one sample placed there
  Index coils = 0, ey = 0, ex = 0;
  double encoded_fov_mm[3] = {0, 0, 0};  // x, y, z
  double recon_fov_mm[3] = {0, 0, 0};
  int recon_matrix[3] = {0, 0, 0};
  // Columns left after removing readout oversampling: round(ex * recon FOV x /
  // encoded FOV x) when the encoded field of view is wider, else ex.
  Index readout_keep = 0;
  // Noise covariance between channels from the noise-adjust acquisitions,
  // Σ_ij = mean over samples of n_i conj(n_j), row-major [coils, coils]; empty
  // without noise scans.
  std::vector<cdouble> noise_covariance;
  int64_t noise_samples = 0;    // samples per channel that went into it
  double noise_dwell_us = 0.0;  // sample_time_us of the noise scans (0: not stated)
  double dwell_us = 0.0;        // sample_time_us of the imaging lines (0: not stated)
  // A noise level the file states itself: the user parameter
  // "recofold.noise_sigma" (std per real and imaginary part; its text copy
  // "recofold.noise_sigma_text" wins when present) that write_ismrmrd_file stores.
  std::optional<double> header_noise_sigma;
  // Counts: acquisitions in the file, imaging lines of the selection, lines
  // placed, noise acquisitions, and skipped acquisitions by kind.
  int64_t acquisitions = 0, selected_lines = 0, noise_acquisitions = 0;
  std::map<std::string, int64_t> skipped;  // "navigator" -> 3, "other slice" -> 128, ...
  // Largest counter value present among imaging lines (slice, contrast,
  // repetition, phase, set, average), for messages and the provenance.
  std::map<std::string, int> counter_max;
  int averages_used = 0;  // averages that went into the selection's mean
  std::string trajectory;  // "cartesian"
  std::map<std::string, std::string> header_texts;  // system, protocol, field strength, ...
  std::string xml;  // the XML header as stored
};

}  // namespace recofold
