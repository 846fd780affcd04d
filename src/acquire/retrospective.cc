// SPDX-License-Identifier: Apache-2.0
// Retrospective undersampling of fully sampled k-space (rules in include/recofold/acquire/retrospective.h).
#include "recofold/acquire/retrospective.h"

#include <cmath>

#include "recofold/acquire/mri.h"
#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/ops/fft.h"

namespace recofold {

std::vector<std::string> RetrospectiveOptions::validate() const {
  std::vector<std::string> e;
  if (!(added_noise_sigma >= 0.0) || !std::isfinite(added_noise_sigma))
    e.push_back("added_noise_sigma = " + std::to_string(added_noise_sigma) + "; must be finite and >= 0");
  return e;
}

Measurement undersample_retrospectively(const Measurement& full, const SamplingMask& mask,
                                        const RetrospectiveOptions& options, const std::string& file) {
  {
    const auto errors = options.validate();
    if (!errors.empty()) throw InputError(file, "added_noise_sigma", errors.front());
  }
  if (full.modality != Modality::kMri || !full.mri)
    throw InputError(file, "/mri", "retrospective undersampling needs an MRI measurement");
  const MriData& src = *full.mri;
  const Index ny = full.ny, nx = full.nx, n = ny * nx;
  RECOFOLD_CHECK(src.kspace.shape.rank() == 3 && src.kspace.shape[1] == ny && src.kspace.shape[2] == nx);
  const Index coils = src.kspace.shape[0];
  Index acquired = 0;
  for (uint8_t v : src.mask.data) acquired += v ? 1 : 0;
  if (acquired != n)
    throw InputError(file, "/mri/mask",
                     "samples " + std::to_string(acquired) + " of " + std::to_string(n) +
                         " points: retrospective undersampling needs fully sampled data (its truth is the fully "
                         "sampled image)");
  if (mask.mask.shape != (Shape{ny, nx}))
    throw InputError(file, "/mri/mask",
                     "the new mask is " + mask.mask.shape.to_string() + " but the data are [" + std::to_string(ny) +
                         ", " + std::to_string(nx) + "]");
  if (src.coil_maps.shape != src.kspace.shape)
    throw InputError(file, "/mri/coil_maps", "coil maps are needed for the coil-combined truth");

  // Truth: the sensitivity-weighted combination of the fully sampled coil images.
  NdArray<cfloat> images = src.kspace;
  fft2c_stack(images, FftDirection::kInverse);
  NdArray<cfloat> truth(Shape{ny, nx});
  for (Index p = 0; p < n; ++p) {
    std::complex<double> num(0, 0);
    double den = 0;
    for (Index c = 0; c < coils; ++c) {
      const std::complex<double> s(src.coil_maps.data[static_cast<size_t>(c * n + p)]);
      num += std::conj(s) * std::complex<double>(images.data[static_cast<size_t>(c * n + p)]);
      den += std::norm(s);
    }
    truth.data[static_cast<size_t>(p)] = den > 0 ? cfloat(num / den) : cfloat(0, 0);
  }

  Measurement m = full;
  MriData& d = *m.mri;
  d.mask = mask.mask;
  for (auto& v : d.mask.data) v = v ? 1 : 0;
  Index kept = 0;
  for (Index c = 0; c < coils; ++c)
    for (Index p = 0; p < n; ++p)
      if (!d.mask.data[static_cast<size_t>(p)]) d.kspace.data[static_cast<size_t>(c * n + p)] = cfloat(0, 0);
  for (uint8_t v : d.mask.data) kept += v;
  if (kept == 0) throw InputError(file, "/mri/mask", "the new mask samples nothing");
  if (options.added_noise_sigma > 0) {
    Rng rng(options.seed);
    add_kspace_noise(d.kspace, d.mask, options.added_noise_sigma, 0.0, rng);
  }
  d.numbers["source_noise_sigma"] = src.noise_sigma;
  d.numbers["added_noise_sigma"] = options.added_noise_sigma;
  d.noise_sigma = std::sqrt(src.noise_sigma * src.noise_sigma + options.added_noise_sigma * options.added_noise_sigma);
  d.pattern = mask.pattern;
  d.acceleration = static_cast<double>(n) / static_cast<double>(kept);
  d.spoke_angles_rad = mask.spoke_angles_rad;
  d.texts["truth"] =
      "fully sampled: the sensitivity-weighted coil combination of the fully sampled data (it carries their noise)";
  m.truth = std::move(truth);
  m.truth_is_complex = true;
  m.truth_kind = "fully sampled";
  return m;
}

}  // namespace recofold
