// SPDX-License-Identifier: Apache-2.0
// Architecture of a normalising flow: parsing, validation, JSON.
#include "recofold/learn/flow_architecture.h"

#include <cmath>

#include "recofold/core/error.h"
#include "recofold/core/json.h"

namespace recofold {

std::string_view to_string(FlowMixing m) {
  switch (m) {
    case FlowMixing::kInvConv: return "invconv";
    case FlowMixing::kReverse: return "reverse";
  }
  return "?";
}

std::optional<FlowMixing> parse_flow_mixing(std::string_view text) {
  for (FlowMixing m : {FlowMixing::kInvConv, FlowMixing::kReverse})
    if (to_string(m) == text) return m;
  return std::nullopt;
}

namespace {
std::string num(double v) { return json_number(v); }
bool positive(double v) { return v > 0 && std::isfinite(v); }
}  // namespace

std::vector<std::string> FlowArchitecture::validate() const {
  std::vector<std::string> e;
  auto bad = [&](const std::string& field, const std::string& value, const std::string& rule) {
    e.push_back("model." + field + " = " + value + "; " + rule);
  };
  if (ny < 1 || nx < 1 || ny > 4096 || nx > 4096)
    bad("size", std::to_string(ny) + "x" + std::to_string(nx), "each side must be in 1..4096");
  if (channels < 1 || channels > 16) bad("channels", std::to_string(channels), "must be in 1..16");
  if (scales < 1 || scales > 6) {
    bad("scales", std::to_string(scales), "must be in 1..6");
  } else {
    const Index f = Index(1) << (scales - 1);
    if (ny % f || nx % f)
      bad("scales", std::to_string(scales),
          "the image size " + std::to_string(ny) + "x" + std::to_string(nx) + " must be divisible by 2^(scales-1) = " +
              std::to_string(f));
    else if (scales == 1 && channels < 2 && ny * nx < 2)
      bad("scales", "1", "a 1-channel 1x1 input leaves nothing to couple");
  }
  if (couplings < 1 || couplings > 16) bad("couplings", std::to_string(couplings), "must be in 1..16");
  if (width < 4 || width > 512) bad("width", std::to_string(width), "must be in 4..512");
  if (!std::isfinite(data_shift)) bad("data_shift", num(data_shift), "must be finite");
  if (!positive(data_scale)) bad("data_scale", num(data_scale), "must be > 0");
  if (!positive(dequant)) bad("dequant", num(dequant), "must be > 0");
  if (!positive(imag_sigma)) bad("imag_sigma", num(imag_sigma), "must be > 0");
  return e;
}

std::string FlowArchitecture::to_json() const {
  JsonObjectWriter w;
  w.add("ny", static_cast<long long>(ny));
  w.add("nx", static_cast<long long>(nx));
  w.add("channels", channels);
  w.add("scales", scales);
  w.add("couplings", couplings);
  w.add("width", width);
  w.add("mixing", std::string(to_string(mixing)));
  w.add("actnorm", actnorm);
  w.add("data_shift", data_shift);
  w.add("data_scale", data_scale);
  w.add("dequant", dequant);
  w.add("imag_sigma", imag_sigma);
  return w.str();
}

FlowArchitecture FlowArchitecture::from_json(const std::string& json, const std::string& file,
                                             const std::string& field) {
  JsonValue doc = parse_json(json, file, field);
  if (doc.kind != JsonValue::Kind::kObject) throw InputError(file, field, "must be a JSON object");
  FlowArchitecture a;
  auto number = [&](const std::string& key, const JsonValue& v) {
    if (v.kind != JsonValue::Kind::kNumber) throw InputError(file, field, "key '" + key + "' must be a number");
    return v.number;
  };
  auto integer = [&](const std::string& key, const JsonValue& v) {
    const double x = number(key, v);
    if (x != std::floor(x) || std::fabs(x) > 1e9) throw InputError(file, field, "key '" + key + "' must be an integer");
    return static_cast<long long>(x);
  };
  for (const auto& [key, v] : doc.members) {
    if (key == "ny") {
      a.ny = integer(key, v);
    } else if (key == "nx") {
      a.nx = integer(key, v);
    } else if (key == "channels") {
      a.channels = static_cast<int>(integer(key, v));
    } else if (key == "scales") {
      a.scales = static_cast<int>(integer(key, v));
    } else if (key == "couplings") {
      a.couplings = static_cast<int>(integer(key, v));
    } else if (key == "width") {
      a.width = static_cast<int>(integer(key, v));
    } else if (key == "mixing") {
      if (v.kind != JsonValue::Kind::kString) throw InputError(file, field, "key 'mixing' must be a string");
      auto m = parse_flow_mixing(v.text);
      if (!m) throw InputError(file, field, "mixing '" + v.text + "' is not one of invconv, reverse");
      a.mixing = *m;
    } else if (key == "actnorm") {
      if (v.kind != JsonValue::Kind::kBool) throw InputError(file, field, "key 'actnorm' must be true or false");
      a.actnorm = v.boolean;
    } else if (key == "data_shift") {
      a.data_shift = number(key, v);
    } else if (key == "data_scale") {
      a.data_scale = number(key, v);
    } else if (key == "dequant") {
      a.dequant = number(key, v);
    } else if (key == "imag_sigma") {
      a.imag_sigma = number(key, v);
    } else {
      throw InputError(file, field, "unknown flow architecture key '" + key + "'");
    }
  }
  const auto errors = a.validate();
  if (!errors.empty()) {
    std::string all;
    for (const auto& m : errors) all += (all.empty() ? "" : "; ") + m;
    throw InputError(file, field, all);
  }
  return a;
}

const std::vector<std::string>& FlowArchitecture::config_keys() {
  static const std::vector<std::string> keys = {"scales",     "couplings",  "width",   "mixing",    "actnorm",
                                                "data_shift", "data_scale", "dequant", "imag_sigma"};
  return keys;
}

FlowArchitecture FlowArchitecture::from_config(const Config& t) {
  FlowArchitecture a;
  a.scales = static_cast<int>(t.get_int_or("scales", a.scales));
  a.couplings = static_cast<int>(t.get_int_or("couplings", a.couplings));
  a.width = static_cast<int>(t.get_int_or("width", a.width));
  if (t.has("mixing")) {
    auto m = parse_flow_mixing(t.get_string("mixing"));
    if (!m) throw t.error("mixing", "'" + t.get_string("mixing") + "' is not one of invconv, reverse");
    a.mixing = *m;
  }
  a.actnorm = t.get_bool_or("actnorm", a.actnorm);
  a.data_shift = t.get_double_or("data_shift", a.data_shift);
  a.data_scale = t.get_double_or("data_scale", a.data_scale);
  a.dequant = t.get_double_or("dequant", a.dequant);
  a.imag_sigma = t.get_double_or("imag_sigma", a.imag_sigma);
  return a;  // the caller fills ny/nx from [data], then validates
}

std::string FlowArchitecture::describe() const {
  return "flow " + std::to_string(ny) + "x" + std::to_string(nx) + (channels > 1 ? "x" + std::to_string(channels) : "") +
         ", " + std::to_string(scales) + " scales x " + std::to_string(couplings) + " couplings, width " +
         std::to_string(width) + ", " + std::string(to_string(mixing)) + (actnorm ? ", actnorm" : "");
}

}  // namespace recofold
