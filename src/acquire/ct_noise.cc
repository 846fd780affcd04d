// SPDX-License-Identifier: Apache-2.0
// Transmission noise: per-view seeded Poisson counts, Gaussian electronic noise and clipped log transform.
#include "recofold/acquire/ct_noise.h"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/core/rng.h"

namespace recofold {

namespace {
void check(const TransmissionNoiseOptions& o) {
  const auto errors = o.validate();
  if (errors.empty()) return;
  std::string all;
  for (const auto& e : errors) all += (all.empty() ? "" : "; ") + e;
  throw InputError("", "transmission noise", all);
}
}  // namespace

std::vector<std::string> TransmissionNoiseOptions::validate() const {
  std::vector<std::string> errors;
  if (!(photons_per_ray > 0.0) || !std::isfinite(photons_per_ray))
    errors.push_back("photons_per_ray = " + format_sig(photons_per_ray, 6) + "; must be > 0");
  if (bowtie && !(bowtie_edge_fraction > 0.0 && bowtie_edge_fraction <= 1.0))
    errors.push_back("bowtie_edge_fraction = " + format_sig(bowtie_edge_fraction, 6) + "; must be in (0, 1]");
  if (!(electronic_sigma >= 0.0) || !std::isfinite(electronic_sigma))
    errors.push_back("electronic_sigma = " + format_sig(electronic_sigma, 6) + "; must be >= 0");
  return errors;
}

std::vector<double> incident_photons(const TransmissionNoiseOptions& o, Index detectors) {
  std::vector<double> i0(static_cast<size_t>(std::max<Index>(detectors, 0)), o.photons_per_ray);
  if (!o.bowtie || detectors < 2) return i0;
  const double mid = 0.5 * double(detectors - 1), e = o.bowtie_edge_fraction;
  for (Index j = 0; j < detectors; ++j) {
    const double r = std::abs(double(j) - mid) / mid;
    const double c = std::cos(0.5 * M_PI * r);
    i0[static_cast<size_t>(j)] = o.photons_per_ray * (e + (1.0 - e) * c * c);
  }
  return i0;
}

std::vector<double> transmission_counts(
    const TransmissionNoiseOptions& o, const float* p, Index views, Index detectors, uint64_t seed) {
  check(o);
  const std::vector<double> i0 = incident_photons(o, detectors);
  std::vector<double> counts(static_cast<size_t>(views * detectors));
#pragma omp parallel for schedule(dynamic, 4)
  for (Index v = 0; v < views; ++v) {
    Rng rng = Rng::for_stream(seed, static_cast<uint64_t>(v));
    for (Index j = 0; j < detectors; ++j) {
      const size_t k = static_cast<size_t>(v * detectors + j);
      const double lambda = i0[static_cast<size_t>(j)] * std::exp(-double(p[k]));
      double n = static_cast<double>(rng.poisson(lambda));
      if (o.electronic_sigma > 0.0) n += o.electronic_sigma * rng.normal();
      counts[k] = n;
    }
  }
  return counts;
}

float counts_to_line_integral(double counts, double i0) {
  return static_cast<float>(-std::log(std::max(counts, 1.0) / i0));
}

void add_transmission_noise(const TransmissionNoiseOptions& o, float* p, Index views, Index detectors, uint64_t seed) {
  const std::vector<double> counts = transmission_counts(o, p, views, detectors, seed);
  const std::vector<double> i0 = incident_photons(o, detectors);
  for (Index v = 0; v < views; ++v)
    for (Index j = 0; j < detectors; ++j) {
      const size_t k = static_cast<size_t>(v * detectors + j);
      p[k] = counts_to_line_integral(counts[k], i0[static_cast<size_t>(j)]);
    }
}

}  // namespace recofold
