// SPDX-License-Identifier: Apache-2.0
// The measurement file: everything a reconstruction needs in one HDF5 file.
//
// Layout (HDF5):
//   /                        attrs research_use_only = 1, producer, modality ("mri"|"ct"|"denoise"|"inpaint"),
//                            image_shape int64[2] (ny, nx), pixel_spacing_mm float64[2]
//   /mri/kspace              complex64 [coils, ny, nx]; zero where not sampled
//   /mri/mask                uint8 [ny, nx]; 1 = sampled
//   /mri/coil_maps           complex64 [coils, ny, nx]
//   /mri                     attrs noise_sigma (std of the real and of the imaginary
//                            part of each k-space sample), pattern, acceleration,
//                            coil_maps_source, plus numbers/texts
//   /mri/spoke_angles_rad    float64 [spokes] (radial patterns only)
//   /ct/sinogram             float32 [views, detectors]; line integrals (dimensionless:
//                            mu [1/mm] x path length [mm])
//   /ct/angles_rad           float64 [views]
//   /ct                      attrs geometry ("parallel"|"fan"), detector_shape
//                            ("flat"|"equiangular"), detector_count, detector_spacing_mm
//                            (fan equiangular: arc length at the detector), detector_offset_mm,
//                            source_to_isocenter_mm, source_to_detector_mm,
//                            photons_per_ray (0: noiseless), electronic_sigma, mu_per_mm,
//                            plus numbers/texts
//   /observed/image          float32 [ny, nx] (denoise, inpaint): the observed image in the
//                            object's intensity units; 0 where not observed
//   /observed/pixel_mask     uint8 [ny, nx]; 1 = observed (denoise: all 1; at least one 1)
//   /observed                attrs noise_sigma (std of the Gaussian noise per observed pixel),
//                            pattern ("all"|"random"|"blocks"|"file"), kept_fraction
//   /truth/image             float32 or complex64 [ny, nx] (when known)
//   /truth                   attr kind ("analytic"|"discrete"|"fully sampled": the coil-combined
//                            image of fully sampled data, retrospective undersampling)
//   /provenance              attrs producer, command, created_utc, extra entries
#pragma once

#include <string>

#include "recofold/core/measurement.h"

namespace recofold {

// Writes atomically; throws WorkError on I/O failure.
void write_measurement_file(const std::string& path, const Measurement& m);
// Reads and validates every field against the layout above (shapes agree with
// image_shape and with each other, values finite, mask 0/1); InputError names
// the file and dataset.
Measurement read_measurement_file(const std::string& path);

}  // namespace recofold
