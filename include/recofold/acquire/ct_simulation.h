// SPDX-License-Identifier: Apache-2.0
// CT acquisition: the scan protocol with its automatic geometry, exact or projected sinograms, noise, the measurement.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "recofold/acquire/ct_noise.h"
#include "recofold/core/field_error.h"
#include "recofold/core/measurement.h"
#include "recofold/core/types.h"
#include "recofold/ops/ct_geometry.h"
#include "recofold/phantom/phantom.h"
#include "recofold/sampling/view_set.h"

namespace recofold {

// Largest line integral the automatic attenuation scale aims at: about 200 mm
// of water at 0.02 / mm (0.2 cm^-1 near 60-70 keV, from memory; DEVELOPERS.md "Sources"),
// i.e. the largest line integrals of an adult head, usually quoted as 3-5.
constexpr double kAutoLargestLineIntegral = 4.0;

// A CT scan protocol. Zero in a size or distance means "automatic"; the
// automatic values (the only place they live) are those of
// make_ct_geometry():
//   arc                  180 degrees parallel, 360 degrees fan
//   detector_count       ceil(sqrt(2) max(ny, nx)) (covers the image diagonal)
//   detector_spacing_mm  one pixel at the isocentre: the pixel size (parallel),
//                        pixel x D / R on the detector (fan)
//   source_to_isocenter  2 x the field of view, max(ny, nx) x pixel (fan)
//   source_to_detector   2 x source_to_isocenter (fan)
// Field paths in errors: "ct.<field>" ("ct.views", "ct.detector_count", ...).
struct CtScan {
  CtBeam beam = CtBeam::kParallel;
  FanDetector fan_detector = FanDetector::kEquiangular;  // fan only
  // View angles in radians, in acquisition order. Empty: `views` views over
  // `arc_deg` from `start_deg` in `order` (sampling/view_set.h make_view_set).
  std::vector<double> angles_rad;
  int views = 180;                          // >= 1 (without angles_rad)
  double arc_deg = 0.0;                     // (0, 360]; 0: automatic
  double start_deg = 0.0;                   // finite
  ViewOrder order = ViewOrder::kSequential;
  Index detector_count = 0;             // >= 0 (0: automatic)
  double detector_spacing_mm = 0.0;     // >= 0 (0: automatic)
  double detector_offset_mm = 0.0;      // finite
  double source_to_isocenter_mm = 0.0;  // fan, >= 0 (0: automatic)
  double source_to_detector_mm = 0.0;   // fan, >= 0 (0: automatic)

  // Every violation by field path (without the grid-dependent checks of
  // CtGeometry::validate, which make_ct_geometry adds).
  std::vector<FieldError> validate() const;
};

// The geometry of `scan` on an ny x nx grid of square pixels of `pixel_mm`,
// automatic values filled in (above). Throws InvalidFields ("ct.*" fields;
// CtGeometry's own rules are reported as "ct.<geometry field>").
CtGeometry make_ct_geometry(const CtScan& scan, Index ny, Index nx, double pixel_mm);

struct CtSimulationOptions {
  CtScan scan;
  // Attenuation per unit phantom intensity (1/mm). <= 0 selects it
  // automatically as kAutoLargestLineIntegral / (largest noiseless line
  // integral in intensity x mm), so any phantom's most attenuating ray gets
  // p = 4. At 256 mm this gives (measured): qc-disk 0.022/mm (its water-like
  // background 1.0 lands near water's 0.02/mm); Shepp-Logan 1974 0.016/mm
  // (brain ~1.0); modified Shepp-Logan 0.056/mm (brain 0.2 -> 0.011/mm,
  // skull 1.0 -> 0.056/mm). Give a value for a fixed physical mapping instead.
  double mu_per_mm = 0.0;
  // true: exact line integrals of the analytic phantom (no inverse crime);
  // false: the Joseph projector applied to the raster ("discrete" truth).
  bool analytic = true;
  bool noisy = false;              // add transmission noise (below)
  TransmissionNoiseOptions noise;  // used when noisy
  uint64_t seed = 0;               // noise streams (Rng::for_stream(seed, view))
  std::string view_source;         // recorded in /ct as text view_source ("" = not recorded)

  // Every violation: scan ("ct.*"), "ct.mu_per_mm", and with noise
  // "ct.photons_per_ray", "ct.bowtie_edge_fraction", "ct.electronic_sigma".
  std::vector<FieldError> validate() const;
};

// Simulates a CT acquisition of an object on the grid of `raster` ([ny, nx];
// its real part is the truth and, with !options.analytic, the object) with
// square pixels of `pixel_spacing_mm`. `analytic` (the phantom's component
// table) is required when options.analytic; its fov_mm must equal
// nx * pixel_spacing_mm within 0.1 % and the grid must be square.
// Returns the full record: modality ct, grid, pixel spacing, /ct (sinogram of
// line integrals, dimensionless, after noise and log transform when noisy;
// geometry; mu_per_mm; photons_per_ray; electronic_sigma; numbers
// "largest_line_integral" (noiseless), "mu_automatic" (1/0),
// "bowtie_edge_fraction" (bowtie only); texts "sinogram_source" ("analytic" |
// "discrete"), "noise_model", "view_source"), the truth (real) and its kind.
// The caller fills the provenance. Throws InvalidFields for invalid options
// and InputError (fields "phantom", "truth", "raster") for an unusable object.
Measurement simulate_ct(const Phantom* analytic, const ImageC& raster, double pixel_spacing_mm,
                        const CtSimulationOptions& options);

}  // namespace recofold
