// SPDX-License-Identifier: Apache-2.0
// Transmission (photon-counting) noise for CT sinograms: Poisson counts, electronic noise, log transform.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "recofold/core/types.h"

namespace recofold {

// Noise model of one detector reading along a ray with line integral p
// (dimensionless, i.e. attenuation x mm):
//   N = Poisson(I0_j exp(-p)) + electronic_sigma * n,  n ~ Normal(0, 1)
//   p_hat = -ln(max(N, 1) / I0_j)
// The clipping at one count (common practice) keeps the log finite when a ray
// is (nearly) fully absorbed or the electronic noise drives N below one; it
// caps p_hat at ln(I0_j) and biases very opaque rays low. Low-dose studies use
// I0 around 1e4-1e5 photons per ray (common practice, from memory).
struct TransmissionNoiseOptions {
  // Incident photons per ray at the detector centre (I0), > 0.
  double photons_per_ray = 1e4;
  // Bowtie-like profile: I0_j = I0 (e + (1 - e) cos^2(pi/2 * r_j)), r_j in
  // [0, 1] the distance of element j from the detector centre relative to the
  // half-length, e = bowtie_edge_fraction. A smooth stand-in for a bowtie
  // filter (more noise at the fan's edges), not a physical filter model.
  bool bowtie = false;
  double bowtie_edge_fraction = 0.25;  // (0, 1]; only with bowtie
  // Standard deviation of additive Gaussian electronic noise, in counts, >= 0.
  double electronic_sigma = 0.0;

  // Every violation, "photons_per_ray = -1; must be > 0" style.
  std::vector<std::string> validate() const;
};

// Incident photons I0_j for each of `detectors` elements.
std::vector<double> incident_photons(const TransmissionNoiseOptions& options, Index detectors);

// Counts for each ray of a [views, detectors] sinogram of line integrals.
// Views draw from independent streams Rng::for_stream(seed, view), so the
// result does not depend on the thread count. Throws InputError for invalid
// options.
std::vector<double> transmission_counts(
    const TransmissionNoiseOptions& options, const float* line_integrals, Index views, Index detectors, uint64_t seed);

// p_hat = -ln(max(counts, 1) / i0).
float counts_to_line_integral(double counts, double i0);

// Replaces each line integral by its noisy estimate p_hat (in place).
void add_transmission_noise(
    const TransmissionNoiseOptions& options, float* line_integrals, Index views, Index detectors, uint64_t seed);

}  // namespace recofold
