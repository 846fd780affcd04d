// SPDX-License-Identifier: Apache-2.0
// Measurement record: everything a reconstruction needs (file layout in io/measurement_file.h).
#pragma once

#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/provenance.h"
#include "recofold/core/trajectory.h"
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

// MRI k-space, Cartesian or non-Cartesian (file layout: io/measurement_file.h).
//
// Cartesian (trajectory empty): kspace [C, ny, nx] on the image's centred
// frequency grid (ops/fft.h, fft2c: orthonormal, so a sample's noise std
// equals the image-domain std), zero where mask = 0.
// Non-Cartesian (trajectory set): kspace [C, M], sample j of coil c taken at
// the trajectory's point j (core/trajectory.h: cycles per FOV, the NUFFT's
// orthonormal scaling of ops/nufft.h, so integer points equal fft2c); mask is
// empty (every listed point is sampled).
struct MriData {
  NdArray<cfloat> kspace;     // Cartesian [C, ny, nx] | non-Cartesian [C, M]; C >= 1 coils
  NdArray<uint8_t> mask;      // Cartesian [ny, nx], 1 = sampled, 0 = not; non-Cartesian: empty
  NdArray<cfloat> coil_maps;  // [C, ny, nx] receive sensitivities (dimensionless, ~1 in magnitude)
  double noise_sigma = 0.0;   // std of the real and of the imaginary part of each sample (k-space units), >= 0
  // Cartesian: the mask pattern ("lines", "random", "poisson", "radial", ...,
  // "file" or "full"); non-Cartesian: the trajectory kind ("radial",
  // "radial-golden", "spiral", "file").
  std::string pattern;
  // Cartesian: ny nx / sampled grid points; non-Cartesian: ny nx / M (the
  // Cartesian R of the same sample count; M may exceed ny nx, then R < 1).
  double acceleration = 1.0;
  std::string coil_maps_source = "synthetic";  // "synthetic" | "estimated" | "espirit" | "file" (import)
  // Cartesian radial masks only: the spoke angles (rad, acquisition order).
  // A non-Cartesian measurement keeps its angles in trajectory->readout_angles_rad.
  std::vector<double> spoke_angles_rad;
  // Set for non-Cartesian data: the points (kx, ky [M], cycles per FOV,
  // |kx| <= nx/2, |ky| <= ny/2), their density compensation dcf [M]
  // ((cycles per FOV)² per sample, >= 0, required), the kind and the design
  // (readouts, samples_per_readout, angles, design numbers/texts); its grid
  // (ny, nx) is the measurement's.
  std::optional<Trajectory> trajectory;
  // Free-form facts written by the producers (file attributes of /mri):
  //   snr_db            simulate --snr-db: the SNR the noise was set from, dB
  //   coil_correlation  simulate: noise correlation of neighbouring coils, rho in [0, 1)
  //   seed              simulate: noise seed
  //   coil_ring_radius  simulate: radius of the coil ring, units of the [-1, 1] square
  //   source_noise_sigma, added_noise_sigma  simulate --from: noise of the data and noise added
  //   readout_oversampling  import: readout samples acquired / kept (>= 1)
  //   noise_samples     import: noise-scan samples used for the noise estimate
  //   averages          import: averages combined
  //   lines             import: phase-encode lines read
  //   slice_thickness_mm  import: the encoded slice thickness
  std::map<std::string, double> numbers;
  //   kspace_source     one line: how the samples were made (closed form, raster, NUFFT, raw data)
  //   truth             simulate: "analytic" | "discrete"; --from: how the truth was formed
  //   noise_sigma_source, prewhitening  import: where sigma came from, the whitening applied
  //   coil_maps_method  import: how the coil maps were made
  std::map<std::string, std::string> texts;

  bool non_cartesian() const { return trajectory.has_value(); }
  // Samples per coil: M (non-Cartesian) or the ones of the mask.
  Index sample_count() const;
};

// CT sinogram and geometry (ops/ct_geometry.h). Lengths in mm at the isocentre.
struct CtData {
  NdArray<float> sinogram;  // [views, detectors]: line integrals mu x length (dimensionless)
  std::vector<double> angles_rad;  // [views]: source / projection angle of each view, rad
  CtBeam beam = CtBeam::kParallel;
  FanDetector detector_shape = FanDetector::kFlat;  // fan only
  int64_t detector_count = 0;       // = sinogram columns
  double detector_spacing_mm = 1.0;  // detector pitch (fan equiangular: arc length at the detector), > 0
  double detector_offset_mm = 0.0;   // shift of the detector centre from the central ray
  double source_to_isocenter_mm = 0.0;  // fan only, > 0
  double source_to_detector_mm = 0.0;   // fan only, > source_to_isocenter_mm
  double photons_per_ray = 0.0;         // unattenuated counts I0 per ray; 0: noiseless
  double electronic_sigma = 0.0;        // std of the additive Gaussian detector noise, in counts
  double mu_per_mm = 1.0;  // attenuation per unit phantom intensity, 1/mm
  // Free-form facts (file attributes of /ct):
  //   largest_line_integral  simulate: the largest value of the noiseless sinogram
  //   mu_automatic           simulate: 1 when mu_per_mm was chosen from the object, else 0
  //   bowtie_edge_fraction   simulate: I0 at the detector edge / I0 at the centre (bowtie filter)
  std::map<std::string, double> numbers;
  //   sinogram_source  "analytic" (line integrals of the component table) | "discrete" (of the raster)
  //   view_source      where the view angles came from (when not the default set)
  //   noise_model      one line: the transmission noise model, or "none"
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

// One measurement: exactly the data of its modality is set.
struct Measurement {
  Modality modality = Modality::kMri;
  Index ny = 0, nx = 0;  // reconstruction grid, pixels (rows, columns)
  double pixel_spacing_mm[2] = {1.0, 1.0};  // (dy, dx), mm per pixel
  std::optional<MriData> mri;             // modality mri
  std::optional<CtData> ct;               // modality ct
  std::optional<ImageProblemData> image;  // denoise and inpaint
  std::optional<NdArray<cfloat>> truth;   // [ny, nx], the object on the grid (when known)
  bool truth_is_complex = false;          // the truth has a phase (else its imaginary part is 0)
  // "analytic" (k-space / line integrals from the closed form) | "discrete"
  // (from the raster: the inverse crime) | "fully sampled" (retrospective
  // undersampling: the coil-combined image of the full data).
  std::string truth_kind;
  Provenance provenance;  // producer, command, time, extra entries
};


}  // namespace recofold
