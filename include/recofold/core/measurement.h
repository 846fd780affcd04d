// SPDX-License-Identifier: Apache-2.0
// Measurement record: everything a reconstruction needs (file layout in io/measurement_file.h).
#pragma once

#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/provenance.h"
#include "recofold/core/types.h"

namespace recofold {

// The measurement problems recofold simulates and reconstructs. The names
// ("mri", "ct", "denoise", "inpaint") are those of files, flags and configs;
// to_string/parse_modality are the only mapping.
enum class Modality { kMri, kCt, kDenoise, kInpaint };
std::string_view to_string(Modality modality);
std::optional<Modality> parse_modality(std::string_view text);
// "mri, ct, denoise, inpaint"
std::string accepted_modalities();
// Every modality, in the order above.
const std::vector<Modality>& all_modalities();

// CT beam: "parallel" | "fan".
enum class CtBeam { kParallel, kFan };
std::string_view to_string(CtBeam beam);
std::optional<CtBeam> parse_ct_beam(std::string_view text);
// Fan-beam detector shape: "flat" | "equiangular".
enum class FanDetector { kFlat, kEquiangular };
std::string_view to_string(FanDetector shape);
std::optional<FanDetector> parse_fan_detector(std::string_view text);

struct MriData {
  NdArray<cfloat> kspace;     // [coils, ny, nx]
  NdArray<uint8_t> mask;      // [ny, nx]
  NdArray<cfloat> coil_maps;  // [coils, ny, nx]
  double noise_sigma = 0.0;   // per real and per imaginary part
  std::string pattern;        // mask pattern name, "file" or "full"
  double acceleration = 1.0;  // achieved R = ny*nx / samples
  std::string coil_maps_source = "synthetic";  // "synthetic" | "estimated"
  std::vector<double> spoke_angles_rad;        // radial patterns only
  std::map<std::string, double> numbers;
  std::map<std::string, std::string> texts;
};

struct CtData {
  NdArray<float> sinogram;  // [views, detectors]
  std::vector<double> angles_rad;
  CtBeam beam = CtBeam::kParallel;
  FanDetector detector_shape = FanDetector::kFlat;  // fan only
  int64_t detector_count = 0;
  double detector_spacing_mm = 1.0;
  double detector_offset_mm = 0.0;
  double source_to_isocenter_mm = 0.0;  // fan only
  double source_to_detector_mm = 0.0;   // fan only
  double photons_per_ray = 0.0;         // 0: noiseless
  double electronic_sigma = 0.0;
  double mu_per_mm = 1.0;  // attenuation per unit phantom intensity
  std::map<std::string, double> numbers;
  std::map<std::string, std::string> texts;
};

// denoise / inpaint: the observed image y = M x + n on the reconstruction grid
// (image units = the object's intensity units). denoise: M = identity (every
// pixel kept); inpaint: M keeps the pixels where pixel_mask = 1. The noise n
// is white Gaussian with std noise_sigma per kept pixel (real images).
struct ImageProblemData {
  NdArray<float> observed;      // [ny, nx]; 0 where pixel_mask = 0
  NdArray<uint8_t> pixel_mask;  // [ny, nx]; 1 = observed (denoise: all 1)
  double noise_sigma = 0.0;     // std per observed pixel, >= 0
  std::string pattern;          // "all" (denoise), "random", "blocks" or "file" (inpaint)
  double kept_fraction = 1.0;   // observed pixels / (ny nx), in (0, 1]
};

struct Measurement {
  Modality modality = Modality::kMri;
  Index ny = 0, nx = 0;  // reconstruction grid
  double pixel_spacing_mm[2] = {1.0, 1.0};
  std::optional<MriData> mri;
  std::optional<CtData> ct;
  std::optional<ImageProblemData> image;  // denoise and inpaint
  std::optional<NdArray<cfloat>> truth;  // [ny, nx]
  bool truth_is_complex = false;
  std::string truth_kind;  // "analytic" | "discrete" | "fully sampled" (retrospective undersampling)
  Provenance provenance;
};


}  // namespace recofold
