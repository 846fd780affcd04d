// SPDX-License-Identifier: Apache-2.0
// Prior kinds, their names (the one string mapping) and a factory from a plain description.
#pragma once

#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/priors/box.h"
#include "recofold/priors/prior.h"
#include "recofold/priors/tv.h"
#include "recofold/priors/wavelet_l1.h"

namespace recofold {

// The CLI/config names: "none", "l2", "wavelet", "tv", "tv-aniso", "flow".
// kFlow is the likelihood of a trained normalising flow (-log p(x)); it needs
// a model file and the learn module, so the reconstruction builds it
// (recon/flow_prior.h), never make_prior.
enum class PriorKind { kNone, kL2, kWavelet, kTv, kTvAniso, kFlow };

std::string_view to_string(PriorKind kind);
std::optional<PriorKind> parse_prior(std::string_view text);
std::string accepted_priors();  // "none, l2, wavelet, tv, tv-aniso, flow"

// Everything needed to build a prior for an image shape.
struct PriorSpec {
  PriorKind kind = PriorKind::kNone;
  double lambda = 0.0;         // weight, >= 0 (ignored for kNone)
  WaveletL1Options wavelet;    // used by kWavelet
  TvOptions tv;                // used by kTv / kTvAniso (isotropic is set from the kind)
  std::optional<Box> box;      // wraps the prior in a ConstrainedPrior when set (--nonneg: Box{})

  // Every violation, fields named "prior.lambda", "wavelet.levels", "tv.*", "box.*".
  std::vector<std::string> validate(const Shape& image_shape) const;
};

// Throws InputError (file "", field of the first violation, all messages in the reason) when invalid,
// and for kFlow (built by the reconstruction from its model file).
std::unique_ptr<Prior> make_prior(const PriorSpec& spec, const Shape& image_shape);

}  // namespace recofold
