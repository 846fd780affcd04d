// SPDX-License-Identifier: Apache-2.0
// Names of the measurement record's enums (the one string mapping each).
#include "recofold/core/measurement.h"

namespace recofold {

std::string_view to_string(Modality modality) {
  switch (modality) {
    case Modality::kMri: return "mri";
    case Modality::kCt: return "ct";
    case Modality::kDenoise: return "denoise";
    case Modality::kInpaint: return "inpaint";
  }
  return "mri";
}

const std::vector<Modality>& all_modalities() {
  static const std::vector<Modality> all = {Modality::kMri, Modality::kCt, Modality::kDenoise, Modality::kInpaint};
  return all;
}

std::optional<Modality> parse_modality(std::string_view text) {
  for (Modality m : all_modalities())
    if (text == to_string(m)) return m;
  return std::nullopt;
}

std::string accepted_modalities() {
  std::string s;
  for (Modality m : all_modalities()) s += (s.empty() ? "" : ", ") + std::string(to_string(m));
  return s;
}

std::string_view to_string(CtBeam beam) { return beam == CtBeam::kFan ? "fan" : "parallel"; }

std::optional<CtBeam> parse_ct_beam(std::string_view text) {
  if (text == "parallel") return CtBeam::kParallel;
  if (text == "fan") return CtBeam::kFan;
  return std::nullopt;
}

std::string_view to_string(FanDetector shape) { return shape == FanDetector::kFlat ? "flat" : "equiangular"; }

std::optional<FanDetector> parse_fan_detector(std::string_view text) {
  if (text == "flat") return FanDetector::kFlat;
  if (text == "equiangular") return FanDetector::kEquiangular;
  return std::nullopt;
}

Index MriData::sample_count() const {
  if (trajectory) return trajectory->points();
  Index sampled = 0;
  for (uint8_t v : mask.data) sampled += v != 0;
  return sampled;
}

}  // namespace recofold
