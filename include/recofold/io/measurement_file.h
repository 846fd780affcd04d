// SPDX-License-Identifier: Apache-2.0
// The measurement file: everything a reconstruction needs in one HDF5 file.
//
// Layout (HDF5):
//   /                        attrs research_use_only = 1, producer, modality ("mri"|"ct"|"denoise"|"inpaint"),
//                            image_shape int64[2] (ny, nx), pixel_spacing_mm float64[2]
//   /mri/kspace              complex64: Cartesian [coils, ny, nx], zero where not sampled;
//                            non-Cartesian [coils, M], sample j at /mri/trajectory/k row j
//   /mri/mask                uint8 [ny, nx]; 1 = sampled (Cartesian only; absent, and
//                            refused, when /mri/trajectory is present)
//   /mri/coil_maps           complex64 [coils, ny, nx]
//   /mri                     attrs noise_sigma (std of the real and of the imaginary
//                            part of each k-space sample), pattern (mask pattern, or the
//                            trajectory kind), acceleration (ny nx / samples per coil),
//                            coil_maps_source, plus numbers/texts (core/measurement.h)
//   /mri/spoke_angles_rad    float64 [spokes] (Cartesian radial patterns only)
//   /mri/trajectory          non-Cartesian only: the trajectory group of io/trajectory_file.h
//                            under this root: /mri/trajectory/k float32 [M, 2] (kx, ky in cycles
//                            per FOV; finite, |kx| <= nx/2, |ky| <= ny/2), /mri/trajectory/dcf
//                            float32 [M] (required here; finite, >= 0), attrs kind,
//                            image_shape (= the root's), units, fov_mm, readouts,
//                            samples_per_readout, dcf_method and the design numbers/texts,
//                            and readout_angles_rad / positions / gradient_mT_per_m /
//                            sample_time_us as in the trajectory file
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
// image_shape and with each other, values finite, mask 0/1; non-Cartesian:
// points inside the band and finite, one finite weight >= 0 per point, kspace
// [coils, M]); InputError names the file and dataset (e.g. "/mri/trajectory/k").
// Writing a non-Cartesian record whose kspace is not [C, M] or whose dcf is not
// [M] is a WorkError (a program bug, not bad input).
Measurement read_measurement_file(const std::string& path);

}  // namespace recofold
