// SPDX-License-Identifier: Apache-2.0
// Prior names and the factory from PriorSpec.
#include "recofold/priors/prior_spec.h"

#include <cmath>

#include "recofold/priors/constrained.h"
#include "recofold/priors/l2.h"
#include "recofold/core/error.h"
#include "recofold/core/field_error.h"
#include "recofold/priors/zero_prior.h"

namespace recofold {

std::string_view to_string(PriorKind kind) {
  switch (kind) {
    case PriorKind::kNone: return "none";
    case PriorKind::kL2: return "l2";
    case PriorKind::kWavelet: return "wavelet";
    case PriorKind::kTv: return "tv";
    case PriorKind::kTvAniso: return "tv-aniso";
    case PriorKind::kFlow: return "flow";
  }
  return "none";
}

std::optional<PriorKind> parse_prior(std::string_view text) {
  for (PriorKind k : {PriorKind::kNone, PriorKind::kL2, PriorKind::kWavelet, PriorKind::kTv, PriorKind::kTvAniso,
                      PriorKind::kFlow})
    if (text == to_string(k)) return k;
  return std::nullopt;
}

std::string accepted_priors() { return "none, l2, wavelet, tv, tv-aniso, flow"; }

std::vector<std::string> PriorSpec::validate(const Shape& image_shape) const {
  std::vector<std::string> errors;
  if (!(lambda >= 0.0) || !std::isfinite(lambda))
    errors.push_back("prior.lambda = " + std::to_string(lambda) + "; must be finite and >= 0");
  if (kind == PriorKind::kWavelet) {
    const auto e = wavelet.validate(image_shape);
    errors.insert(errors.end(), e.begin(), e.end());
  }
  if (kind == PriorKind::kTv || kind == PriorKind::kTvAniso) {
    const auto e = tv.validate();
    errors.insert(errors.end(), e.begin(), e.end());
  }
  if (box) {
    const auto e = box->validate();
    errors.insert(errors.end(), e.begin(), e.end());
  }
  return errors;
}

std::unique_ptr<Prior> make_prior(const PriorSpec& spec, const Shape& image_shape) {
  throw_if_invalid(parse_field_messages(spec.validate(image_shape)));
  std::unique_ptr<Prior> prior;
  switch (spec.kind) {
    case PriorKind::kNone: prior = std::make_unique<ZeroPrior>(); break;
    case PriorKind::kL2: prior = std::make_unique<L2Prior>(image_shape, spec.lambda); break;
    case PriorKind::kWavelet: prior = std::make_unique<WaveletL1Prior>(image_shape, spec.lambda, spec.wavelet); break;
    case PriorKind::kTv:
    case PriorKind::kTvAniso: {
      TvOptions tv = spec.tv;
      tv.isotropic = spec.kind == PriorKind::kTv;
      prior = std::make_unique<TvPrior>(image_shape, spec.lambda, tv);
      break;
    }
    case PriorKind::kFlow:
      throw InputError("", "prior", "flow: the likelihood of a flow model is built by the reconstruction from its "
                                    "model file, not from a prior description alone");
  }
  if (spec.box) prior = std::make_unique<ConstrainedPrior>(std::move(prior), *spec.box);
  return prior;
}

}  // namespace recofold
