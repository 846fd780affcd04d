// SPDX-License-Identifier: Apache-2.0
// The one operator factory: the linear forward model y = A x + n of a measurement record.
#pragma once

#include <memory>
#include <string>

#include "recofold/core/measurement.h"
#include "recofold/ops/linear_operator.h"
#include "recofold/ops/nufft.h"

namespace recofold {

// The forward model of a measurement, as the iterative methods see it:
//   mri  A = the SENSE operator of ops/fourier.h (mask x centred orthonormal
//        FFT x the record's coil maps), y = the sampled k-space [coils, ny, nx];
//        complex noise of std noise_sigma per real and imaginary part on the
//        sampled points (measured_values = samples x coils);
//        non-Cartesian (mri->trajectory set): A = the SENSE-NUFFT of
//        ops/nufft.h on the trajectory's points (default NufftOptions,
//        ε = 1e-4; normal() by Toeplitz embedding, unweighted: the dcf is not
//        used), y = kspace [coils, M] coil by coil, noise as above
//        (measured_values = M x coils), through make_trajectory_forward_model
//        (recon/gridding.h);
//   ct   A = Joseph's projector of ops/joseph_projector.h with the attenuation
//        scale mu, y = the sinogram [views, detectors] (real); the image is in
//        phantom intensity units; Poisson noise with photons_per_ray
//        (noise_sigma 0: the variance differs per ray, see
//        transmission_noise_energy in recon/lambda_discrepancy.h);
//   denoise, inpaint  A = the pixel mask of ops/pixel_mask.h (denoise: every
//        pixel kept, the identity), y = the observed image [ny, nx] (0 where
//        not observed); real Gaussian noise of std noise_sigma on the kept
//        pixels (measured_values = kept pixels); the object is real.
struct ForwardModel {
  std::unique_ptr<LinearOperator> op;  // image [ny, nx] -> data
  VecC y;                              // the measured data, op's range
  double noise_sigma = 0.0;            // per real/imaginary part (complex_noise) or per value; 0: unknown / none
  bool complex_noise = true;
  Index measured_values = 0;  // values of y that carry data (0 = all of y)
  bool real_object = false;   // the object is real by construction (ct): keep the real part
};

// Builds the forward model of `m`. InputError naming `file` and the dataset
// when the record is inconsistent (no data of its modality, shapes that
// disagree). This is the only place a modality is mapped to an operator.
ForwardModel make_forward_model(const Measurement& m, const std::string& file = "");

// The NUFFT plan of a non-Cartesian measurement's points on its grid
// (default NufftOptions). InputError "/mri/trajectory" when the record has
// none or its grid differs, "/mri/trajectory/k" for points outside the band.
std::shared_ptr<const NufftPlan> trajectory_plan(const Measurement& m, const std::string& file = "");

}  // namespace recofold
