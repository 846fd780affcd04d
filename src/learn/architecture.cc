// SPDX-License-Identifier: Apache-2.0
// Architecture of a learned unrolled network: parsing, validation, JSON.
#include "recofold/learn/architecture.h"

#include <cmath>

#include "recofold/core/error.h"
#include "recofold/core/json.h"
#include "recofold/ops/wavelet.h"

namespace recofold {

std::string_view to_string(LearnedDc dc) {
  switch (dc) {
    case LearnedDc::kGradient: return "gradient";
    case LearnedDc::kCg: return "cg";
    case LearnedDc::kReplace: return "replace";
  }
  return "?";
}

std::optional<LearnedDc> parse_learned_dc(std::string_view text) {
  for (LearnedDc d : {LearnedDc::kGradient, LearnedDc::kCg, LearnedDc::kReplace})
    if (to_string(d) == text) return d;
  return std::nullopt;
}

std::string_view to_string(LearnedPriorKind prior) {
  switch (prior) {
    case LearnedPriorKind::kCnn: return "cnn";
    case LearnedPriorKind::kWavelet: return "wavelet";
    case LearnedPriorKind::kUnet: return "unet";
    case LearnedPriorKind::kTv: return "tv";
    case LearnedPriorKind::kFlow: return "flow";
  }
  return "?";
}

std::optional<LearnedPriorKind> parse_learned_prior(std::string_view text) {
  for (LearnedPriorKind p : {LearnedPriorKind::kCnn, LearnedPriorKind::kWavelet, LearnedPriorKind::kUnet,
                             LearnedPriorKind::kTv, LearnedPriorKind::kFlow})
    if (to_string(p) == text) return p;
  return std::nullopt;
}

namespace {

std::string num(double v) { return json_number(v); }
std::string accepted_priors() { return "cnn, wavelet, unet, tv, flow"; }

const std::vector<std::string>& table_keys() {
  static const std::vector<std::string> keys = {
      "iterations", "prior", "dc", "cg_iterations", "init_step", "init_mu", "depth", "width",
      "kernel", "skips", "shared_weights", "zero_last_layer", "wavelet", "levels", "init_threshold",
      "tv_iterations", "flow_steps", "init_flow_step", "init_flow_lambda", "flow_finetune", "flow_model", "kind"};
  return keys;
}

}  // namespace

std::vector<std::string> UnrolledArchitecture::validate() const {
  std::vector<std::string> e;
  auto bad = [&](const std::string& field, const std::string& value, const std::string& rule) {
    e.push_back("model." + field + " = " + value + "; " + rule);
  };
  if (ny < 8 || nx < 8 || ny > 4096 || nx > 4096)
    bad("size", std::to_string(ny) + "x" + std::to_string(nx), "each side must be in 8..4096");
  if (iterations < 1 || iterations > 50) bad("iterations", std::to_string(iterations), "must be in 1..50");
  if (cg_iterations < 1 || cg_iterations > 200)
    bad("cg_iterations", std::to_string(cg_iterations), "must be in 1..200");
  if (!(init_step > 0 && std::isfinite(init_step))) bad("init_step", num(init_step), "must be > 0");
  if (!(init_mu > 0 && std::isfinite(init_mu))) bad("init_mu", num(init_mu), "must be > 0");
  if (prior == LearnedPriorKind::kUnet) {
    if (depth < 1 || depth > 6) {
      bad("depth", std::to_string(depth), "must be in 1..6 for a unet (resolution levels)");
    } else if (ny % (Index(1) << depth) || nx % (Index(1) << depth)) {
      bad("depth", std::to_string(depth), "the image size must be divisible by 2^depth for a unet");
    }
    if (width < 1 || width > 128) bad("width", std::to_string(width), "must be in 1..128 for a unet");
  } else {
    if (depth < 2 || depth > 30) bad("depth", std::to_string(depth), "must be in 2..30");
    if (width < 1 || width > 256) bad("width", std::to_string(width), "must be in 1..256");
  }
  if (kernel < 1 || kernel > 9 || kernel % 2 == 0) bad("kernel", std::to_string(kernel), "must be odd, 1..9");
  if (!parse_wavelet(wavelet)) bad("wavelet", wavelet, "must be one of " + accepted_wavelets());
  if (levels < 1 || levels > 8) {
    bad("levels", std::to_string(levels), "must be in 1..8");
  } else if (prior == LearnedPriorKind::kWavelet && (ny % (Index(1) << levels) || nx % (Index(1) << levels))) {
    bad("levels", std::to_string(levels), "image size must be divisible by 2^levels");
  }
  if (!(init_threshold > 0 && std::isfinite(init_threshold)))
    bad("init_threshold", num(init_threshold), "must be > 0");
  if (dc == LearnedDc::kReplace && modality != Modality::kMri) bad("dc", "replace", "only for single-coil MRI");
  if (tv_iterations < 1 || tv_iterations > 200) bad("tv_iterations", std::to_string(tv_iterations), "must be in 1..200");
  if (flow_steps < 1 || flow_steps > 20) bad("flow_steps", std::to_string(flow_steps), "must be in 1..20");
  if (!(init_flow_step > 0 && init_flow_step <= 1)) bad("init_flow_step", num(init_flow_step), "must be in (0, 1]");
  if (!(init_flow_lambda > 0 && std::isfinite(init_flow_lambda)))
    bad("init_flow_lambda", num(init_flow_lambda), "must be > 0");
  if (prior == LearnedPriorKind::kFlow) {
    if (!flow) {
      bad("flow_model", "(none)", "prior flow needs a trained flow model file");
    } else {
      for (const auto& m : flow->validate()) e.push_back("flow " + m);
      if (flow->channels != 1) bad("flow_model", "channels " + std::to_string(flow->channels), "the flow must model 1-channel images");
      if (flow->ny != ny || flow->nx != nx)
        bad("flow_model", std::to_string(flow->ny) + "x" + std::to_string(flow->nx),
            "the flow's image size must equal the model's " + std::to_string(ny) + "x" + std::to_string(nx));
    }
  }
  return e;
}

std::string UnrolledArchitecture::to_json() const {
  JsonObjectWriter w;
  w.add("modality", std::string(to_string(modality)));
  w.add("ny", static_cast<long long>(ny));
  w.add("nx", static_cast<long long>(nx));
  w.add("iterations", iterations);
  w.add("prior", std::string(to_string(prior)));
  w.add("dc", std::string(to_string(dc)));
  w.add("cg_iterations", cg_iterations);
  w.add("init_step", init_step);
  w.add("init_mu", init_mu);
  w.add("depth", depth);
  w.add("width", width);
  w.add("kernel", kernel);
  w.add("skips", skips);
  w.add("shared_weights", shared_weights);
  w.add("zero_last_layer", zero_last_layer);
  w.add("wavelet", wavelet);
  w.add("levels", levels);
  w.add("init_threshold", init_threshold);
  w.add("tv_iterations", tv_iterations);
  w.add("flow_steps", flow_steps);
  w.add("init_flow_step", init_flow_step);
  w.add("init_flow_lambda", init_flow_lambda);
  w.add("flow_finetune", flow_finetune);
  if (flow) w.add_raw("flow", flow->to_json());
  return w.str();
}

UnrolledArchitecture UnrolledArchitecture::from_json(const std::string& json, const std::string& file,
                                                     const std::string& field) {
  JsonValue doc = parse_json(json, file, field);
  if (doc.kind != JsonValue::Kind::kObject) throw InputError(file, field, "must be a JSON object");
  UnrolledArchitecture a;
  auto need = [&](const std::string& key, const JsonValue& v, JsonValue::Kind kind, const char* what) {
    if (v.kind != kind) throw InputError(file, field, "key '" + key + "' must be " + what);
  };
  auto integer = [&](const std::string& key, const JsonValue& v) {
    need(key, v, JsonValue::Kind::kNumber, "a number");
    if (v.number != std::floor(v.number) || std::fabs(v.number) > 1e9)
      throw InputError(file, field, "key '" + key + "' must be an integer");
    return static_cast<long long>(v.number);
  };
  for (const auto& [key, v] : doc.members) {
    if (key == "modality") {
      need(key, v, JsonValue::Kind::kString, "a string");
      const auto parsed = parse_modality(v.text);
      if (!parsed) throw InputError(file, field, "key 'modality' = '" + v.text + "'; expected mri, ct, denoise or inpaint");
      a.modality = *parsed;
    } else if (key == "ny") {
      a.ny = integer(key, v);
    } else if (key == "nx") {
      a.nx = integer(key, v);
    } else if (key == "iterations") {
      a.iterations = static_cast<int>(integer(key, v));
    } else if (key == "prior") {
      need(key, v, JsonValue::Kind::kString, "a string");
      auto p = parse_learned_prior(v.text);
      if (!p) throw InputError(file, field, "prior '" + v.text + "' is not one of " + accepted_priors());
      a.prior = *p;
    } else if (key == "dc") {
      need(key, v, JsonValue::Kind::kString, "a string");
      auto d = parse_learned_dc(v.text);
      if (!d) throw InputError(file, field, "dc '" + v.text + "' is not one of gradient, cg, replace");
      a.dc = *d;
    } else if (key == "cg_iterations") {
      a.cg_iterations = static_cast<int>(integer(key, v));
    } else if (key == "init_step") {
      need(key, v, JsonValue::Kind::kNumber, "a number");
      a.init_step = v.number;
    } else if (key == "init_mu") {
      need(key, v, JsonValue::Kind::kNumber, "a number");
      a.init_mu = v.number;
    } else if (key == "depth") {
      a.depth = static_cast<int>(integer(key, v));
    } else if (key == "width") {
      a.width = static_cast<int>(integer(key, v));
    } else if (key == "kernel") {
      a.kernel = static_cast<int>(integer(key, v));
    } else if (key == "skips") {
      need(key, v, JsonValue::Kind::kBool, "true or false");
      a.skips = v.boolean;
    } else if (key == "shared_weights") {
      need(key, v, JsonValue::Kind::kBool, "true or false");
      a.shared_weights = v.boolean;
    } else if (key == "zero_last_layer") {
      need(key, v, JsonValue::Kind::kBool, "true or false");
      a.zero_last_layer = v.boolean;
    } else if (key == "wavelet") {
      need(key, v, JsonValue::Kind::kString, "a string");
      a.wavelet = v.text;
    } else if (key == "levels") {
      a.levels = static_cast<int>(integer(key, v));
    } else if (key == "init_threshold") {
      need(key, v, JsonValue::Kind::kNumber, "a number");
      a.init_threshold = v.number;
    } else if (key == "tv_iterations") {
      a.tv_iterations = static_cast<int>(integer(key, v));
    } else if (key == "flow_steps") {
      a.flow_steps = static_cast<int>(integer(key, v));
    } else if (key == "init_flow_step") {
      need(key, v, JsonValue::Kind::kNumber, "a number");
      a.init_flow_step = v.number;
    } else if (key == "init_flow_lambda") {
      need(key, v, JsonValue::Kind::kNumber, "a number");
      a.init_flow_lambda = v.number;
    } else if (key == "flow_finetune") {
      need(key, v, JsonValue::Kind::kBool, "true or false");
      a.flow_finetune = v.boolean;
    } else if (key == "flow") {
      need(key, v, JsonValue::Kind::kObject, "a JSON object (a flow architecture)");
      a.flow = FlowArchitecture::from_json(write_json(v), file, field + ".flow");
    } else {
      throw InputError(file, field, "unknown architecture key '" + key + "'");
    }
  }
  auto errors = a.validate();
  if (!errors.empty()) {
    std::string all;
    for (const auto& m : errors) all += (all.empty() ? "" : "; ") + m;
    throw InputError(file, field, all);
  }
  return a;
}

UnrolledArchitecture UnrolledArchitecture::from_config(const Config& t, std::string* flow_model) {
  t.expect_only(table_keys());
  UnrolledArchitecture a;
  a.iterations = static_cast<int>(t.get_int_or("iterations", a.iterations));
  if (t.has("prior")) {
    auto p = parse_learned_prior(t.get_string("prior"));
    if (!p) throw t.error("prior", "'" + t.get_string("prior") + "' is not one of " + accepted_priors());
    a.prior = *p;
  }
  if (t.has("dc")) {
    auto d = parse_learned_dc(t.get_string("dc"));
    if (!d) throw t.error("dc", "'" + t.get_string("dc") + "' is not one of gradient, cg, replace");
    a.dc = *d;
  }
  a.cg_iterations = static_cast<int>(t.get_int_or("cg_iterations", a.cg_iterations));
  a.init_step = t.get_double_or("init_step", a.init_step);
  a.init_mu = t.get_double_or("init_mu", a.init_mu);
  a.depth = static_cast<int>(t.get_int_or("depth", a.depth));
  a.width = static_cast<int>(t.get_int_or("width", a.width));
  a.kernel = static_cast<int>(t.get_int_or("kernel", a.kernel));
  a.skips = t.get_bool_or("skips", a.skips);
  a.shared_weights = t.get_bool_or("shared_weights", a.shared_weights);
  a.zero_last_layer = t.get_bool_or("zero_last_layer", a.zero_last_layer);
  a.wavelet = t.get_string_or("wavelet", a.wavelet);
  a.levels = static_cast<int>(t.get_int_or("levels", a.levels));
  a.init_threshold = t.get_double_or("init_threshold", a.init_threshold);
  a.tv_iterations = static_cast<int>(t.get_int_or("tv_iterations", a.tv_iterations));
  a.flow_steps = static_cast<int>(t.get_int_or("flow_steps", a.flow_steps));
  a.init_flow_step = t.get_double_or("init_flow_step", a.init_flow_step);
  a.init_flow_lambda = t.get_double_or("init_flow_lambda", a.init_flow_lambda);
  a.flow_finetune = t.get_bool_or("flow_finetune", a.flow_finetune);
  const std::string fm = t.get_string_or("flow_model", "");
  if (!fm.empty() && a.prior != LearnedPriorKind::kFlow) throw t.error("flow_model", "only used with prior = \"flow\"");
  if (a.prior == LearnedPriorKind::kFlow && fm.empty())
    throw t.error("flow_model", "prior = \"flow\" needs flow_model = \"FLOW.h5\" (a model from a flow training config)");
  if (flow_model) *flow_model = fm;
  return a;  // the caller fills modality, size (and the flow) from [data], then validates
}

std::string UnrolledArchitecture::describe() const {
  const std::string sharing = shared_weights ? " shared" : " per-iteration";
  std::string p;
  switch (prior) {
    case LearnedPriorKind::kCnn:
      p = "cnn depth " + std::to_string(depth) + " width " + std::to_string(width) + " k" + std::to_string(kernel) +
          sharing;
      break;
    case LearnedPriorKind::kWavelet: p = "wavelet " + wavelet + " " + std::to_string(levels) + " levels"; break;
    case LearnedPriorKind::kUnet:
      p = "unet depth " + std::to_string(depth) + " width " + std::to_string(width) + (skips ? "" : " no skips") +
          sharing;
      break;
    case LearnedPriorKind::kTv: p = "learned tv (" + std::to_string(tv_iterations) + " inner steps)"; break;
    case LearnedPriorKind::kFlow:
      p = "flow prior (" + std::to_string(flow_steps) + " gradient steps, " +
          (flow_finetune ? "fine-tuned" : "frozen") + (flow ? ", " + flow->describe() : std::string()) + ")";
      break;
  }
  std::string d = std::string(to_string(dc));
  if (dc == LearnedDc::kCg) d += "(" + std::to_string(cg_iterations) + ")";
  return std::string(to_string(modality)) + " " + std::to_string(ny) + "x" + std::to_string(nx) + ", " + p + ", " +
         std::to_string(iterations) + " it, dc " + d;
}

}  // namespace recofold
