// SPDX-License-Identifier: Apache-2.0
// Reading and validating study configs (study_config.h).
#include "recofold/study/study_config.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/hash.h"
#include "recofold/core/provenance.h"
#include "recofold/acquire/image_problem.h"
#include "recofold/io/image_export.h"
#include "recofold/io/measurement_file.h"
#include "recofold/phantom/family.h"
#include "recofold/priors/prior_spec.h"
#include "recofold/core/field_error.h"
#include "recofold/recon/fbp.h"
#include "recofold/recon/learned_backend.h"
#include "recofold/sampling/mask.h"
#include "recofold/sampling/trajectory.h"
#include "study_util.h"

namespace recofold {

namespace {

std::string join(const std::vector<std::string>& v) {
  std::string s;
  for (const auto& x : v) s += (s.empty() ? "" : ", ") + x;
  return s;
}

// A number or a list of numbers under `key` (at least one value).
std::vector<double> number_list(const Config& t, const std::string& key) {
  std::vector<double> out;
  try {
    out.push_back(t.get_double(key));
  } catch (const InputError&) {
    out = t.get_double_list(key);
  }
  if (out.empty()) throw t.error(key, "empty list; give at least one value");
  for (double v : out)
    if (!std::isfinite(v)) throw t.error(key, "values must be finite");
  return out;
}

std::vector<std::string> string_list(const Config& t, const std::string& key) {
  std::vector<std::string> out;
  try {
    out.push_back(t.get_string(key));
  } catch (const InputError&) {
    out = t.get_string_list(key);
  }
  if (out.empty()) throw t.error(key, "empty list; give at least one value");
  return out;
}

std::vector<int> int_list(const Config& t, const std::string& key, int lo, int hi) {
  std::vector<int> out;
  for (double v : number_list(t, key)) {
    if (v != std::floor(v) || v < lo || v > hi)
      throw t.error(key, "= " + format_number(v) + "; must be an integer in " + std::to_string(lo) + ".." +
                             std::to_string(hi));
    out.push_back(static_cast<int>(v));
  }
  return out;
}

void check_range(const Config& t, const std::string& key, const std::vector<double>& v, double lo, double hi,
                 bool lo_open, const std::string& rule) {
  for (double x : v)
    if (x > hi || x < lo || (lo_open && x == lo)) throw t.error(key, "= " + format_number(x) + "; must be " + rule);
}

std::string resolve(const std::string& path, const std::string& base_dir) {
  if (path.empty() || path[0] == '/') return path;
  const std::string beside = base_dir + "/" + path;
  if (file_exists(beside) || is_directory(beside)) return beside;
  return path;
}

std::string file_stem(const std::string& path) {
  std::string stem = path;
  while (stem.size() > 1 && stem.back() == '/') stem.pop_back();
  stem = stem.substr(stem.find_last_of('/') + 1);
  return stem.substr(0, stem.find('.'));
}

void check_label(const Config& t, const std::string& label) {
  if (label.empty() || label.find_first_of(",|\"\n/") != std::string::npos)
    throw t.error("name", "'" + label + "'; an object label must be non-empty without , | \" / or newlines");
}

// [[measurement]]: a fully sampled MRI measurement on the study grid.
StudyPhantom measurement_object(const Config& t, const StudyConfig& c, const std::string& base_dir) {
  t.expect_only({"file", "name"});
  StudyPhantom sp;
  sp.measurement_path = resolve(t.get_string("file"), base_dir);
  const std::string& path = sp.measurement_path;
  if (!file_exists(path)) throw t.error("file", "measurement file '" + path + "': " + not_a_file_reason(path));
  auto m = std::make_shared<Measurement>();
  try {
    *m = read_measurement_file(path);
  } catch (const InputError& e) {
    throw t.error("file", std::string(e.what()));
  }
  if (m->modality != Modality::kMri || !m->mri)
    throw t.error("file", "'" + path + "' is " + modality_phrase(m->modality) +
                              " measurement; [[measurement]] objects are fully sampled MRI k-space");
  if (m->mri->non_cartesian()) {
    if (!m->truth || m->truth->shape != Shape{m->ny, m->nx})
      throw t.error("file", "'" + path + "' holds non-Cartesian samples (/mri/trajectory) but no truth (/truth); a "
                                "non-Cartesian [[measurement]] object is reconstructed as measured and needs its "
                                "truth to be scored");
  } else {
    Index sampled = 0;
    for (uint8_t v : m->mri->mask.data) sampled += v ? 1 : 0;
    if (sampled != m->ny * m->nx)
      throw t.error("file", "'" + path + "' samples " + std::to_string(sampled) + " of " +
                                std::to_string(m->ny * m->nx) +
                                " k-space points (/mri/mask); a Cartesian [[measurement]] object must be fully "
                                "sampled (non-Cartesian files, with /mri/trajectory, run as measured)");
  }
  const Shape maps{m->mri->kspace.shape[0], m->ny, m->nx};
  if (m->mri->coil_maps.shape != maps)
    throw t.error("file", "'" + path + "' has no coil maps (/mri/coil_maps) for the coil-combined truth");
  if (m->ny != c.ny || m->nx != c.nx)
    throw t.error("file", "'" + path + "' is on a " + std::to_string(m->ny) + "x" + std::to_string(m->nx) +
                              " grid; the study size is " + std::to_string(c.ny) + "x" + std::to_string(c.nx) +
                              " (set size = [" + std::to_string(m->ny) + ", " + std::to_string(m->nx) + "])");
  sp.measured_coils = static_cast<int>(m->mri->kspace.shape[0]);
  sp.label = t.get_string_or("name", file_stem(path));
  check_label(t, sp.label);
  sp.measured = std::move(m);
  return sp;
}

// [[object]]: one slice of an image file on the study grid.
StudyPhantom image_object(const Config& t, const StudyConfig& c, const std::string& base_dir) {
  t.expect_only({"file", "slice", "name"});
  StudyPhantom sp;
  sp.image_path = resolve(t.get_string("file"), base_dir);
  const std::string& path = sp.image_path;
  if (!file_exists(path) && !is_directory(path))
    throw t.error("file", "image file '" + path + "': " + not_a_file_reason(path));
  const int64_t slice = t.get_int_or("slice", 0);
  ImageRecord rec;
  try {
    rec = read_image_any(path);
  } catch (const InputError& e) {
    throw t.error("file", std::string(e.what()));
  }
  const Shape& s = rec.pixels.shape;
  const Index slices = s.rank() == 3 ? s[0] : 1;
  if (slice < 0 || slice >= slices)
    throw t.error("slice", "= " + std::to_string(slice) + " is out of range; '" + path + "' holds " +
                               std::to_string(slices) + " slice" + (slices == 1 ? "" : "s") + " (0.." +
                               std::to_string(slices - 1) + ")");
  const Index ny = s[s.rank() - 2], nx = s[s.rank() - 1];
  if (ny != c.ny || nx != c.nx)
    throw t.error("file", "'" + path + "' has " + std::to_string(ny) + "x" + std::to_string(nx) +
                              " slices; the study size is " + std::to_string(c.ny) + "x" + std::to_string(c.nx) +
                              " (set size = [" + std::to_string(ny) + ", " + std::to_string(nx) + "])");
  auto px = std::make_shared<ImageC>(ny, nx);
  const Index n = ny * nx;
  for (Index k = 0; k < n; ++k) px->data()[k] = cfloat(std::abs(rec.pixels.data[static_cast<size_t>(slice * n + k)]), 0.0f);
  sp.slice = static_cast<int>(slice);
  sp.pixel_spacing_mm = rec.pixel_spacing_mm[1];
  sp.label = t.get_string_or("name", file_stem(path) + "-s" + std::to_string(slice));
  check_label(t, sp.label);
  sp.pixels = std::move(px);
  return sp;
}


// Spec field paths and the [[method]] keys that set them.
const std::vector<std::pair<std::string, std::string>>& spec_keys() {
  static const std::vector<std::pair<std::string, std::string>> keys = {
      {"method", "method"},
      {"prior", "prior"},
      {"prior.wavelet.family", "wavelet"},
      {"prior.wavelet.levels", "levels"},
      {"prior.wavelet.cycle_spin", "cycle_spin"},
      {"lambda", "lambda"},
      {"lambda.rule", "lambda_rule"},
      {"lambda.max_solves", "lambda_solves"},
      {"iterations", "iters"},
      {"tolerance", "tol"},
      {"fista.restart", "restart"},
      {"admm.rho", "rho"},
      {"admm.cg_iterations", "cg_iters"},
      {"pdhg.tau", "tau"},
      {"pdhg.sigma", "sigma"},
      {"fbp.filter", "filter"},
      {"zero_filled.combine", "combine"},
      {"maps", "maps"},
      {"nonneg", "nonneg"},
      {"model", "model"},
  };
  return keys;
}

std::string key_of_field(const std::string& field) {
  if (field.rfind("lambda[", 0) == 0) return "lambda";
  for (const auto& [f, k] : spec_keys())
    if (f == field) return k;
  return field;
}

// Spec violations as an InvalidFields naming method[i].<key>, with the line of the first key.
void throw_spec_errors(const Config& t, int index, const std::vector<FieldError>& errors) {
  if (errors.empty()) return;
  std::vector<FieldError> named;
  int line = 0;
  for (const FieldError& e : errors) {
    const std::string key = key_of_field(e.field);
    if (line == 0) line = t.has(key) ? t.line(key) : t.line();
    named.push_back({"method[" + std::to_string(index) + "]." + key, e.value, e.rule});
  }
  throw InvalidFields(std::move(named), t.file(), line);
}

template <typename Enum, typename Parse>
std::optional<Enum> enum_key(const Config& t, const std::string& key, Parse parse, const std::string& accepted) {
  if (!t.has(key)) return std::nullopt;
  const std::string v = t.get_string(key);
  const auto parsed = parse(v);
  if (!parsed) throw t.error(key, "'" + v + "'; expected one of " + accepted);
  return *parsed;
}

std::optional<int> int_key(const Config& t, const std::string& key) {
  if (!t.has(key)) return std::nullopt;
  const int64_t v = t.get_int(key);
  if (v < -1000000000 || v > 1000000000) throw t.error(key, "= " + std::to_string(v) + "; out of range");
  return static_cast<int>(v);
}

std::optional<double> double_key(const Config& t, const std::string& key) {
  if (!t.has(key)) return std::nullopt;
  return t.get_double(key);
}

std::optional<bool> bool_key(const Config& t, const std::string& key) {
  if (!t.has(key)) return std::nullopt;
  return t.get_bool(key);
}

StudyMethod parse_method_table(const Config& t, int index, const std::string& base_dir) {
  t.expect_only({"name", "method", "prior", "lambda", "lambda_rule", "lambda_solves", "iters", "tol", "wavelet",
                 "levels", "cycle_spin", "restart", "rho", "cg_iters", "tau", "sigma", "filter", "combine", "maps",
                 "nonneg", "modality", "model", "train", "train_steps", "optional"});
  StudyMethod m;
  m.index = index;
  m.line = t.line();
  ReconSpec& s = m.spec;
  const std::string method = t.get_string("method");
  const auto parsed_method = parse_method(method);
  if (!parsed_method) throw t.error("method", "'" + method + "'; expected one of " + accepted_methods());
  s.method = *parsed_method;
  s.prior.kind = enum_key<PriorKind>(t, "prior", parse_prior, accepted_priors());
  s.prior.wavelet.family = enum_key<WaveletFamily>(t, "wavelet", parse_wavelet, accepted_wavelets());
  s.prior.wavelet.levels = int_key(t, "levels");
  s.prior.wavelet.cycle_spin = bool_key(t, "cycle_spin");
  if (t.has("lambda")) {
    std::string text;
    bool is_text = true;
    try {
      text = t.get_string("lambda");
    } catch (const InputError&) {
      is_text = false;
    }
    if (is_text) {
      if (text != "auto")
        throw t.error("lambda", "'" + text + "'; give a number, a list of numbers (per-case oracle choice) or \"auto\"");
      s.lambda.mode = LambdaMode::kAuto;
    } else {
      try {
        s.lambda.value = t.get_double("lambda");
        s.lambda.mode = LambdaMode::kValue;
      } catch (const InputError&) {
        s.lambda.grid = t.get_double_list("lambda");
        s.lambda.mode = LambdaMode::kGrid;
      }
    }
  }
  s.lambda.rule = enum_key<LambdaRule>(t, "lambda_rule", parse_lambda_rule, accepted_lambda_rules());
  s.lambda.max_solves = int_key(t, "lambda_solves");
  s.iterations = int_key(t, "iters");
  s.tolerance = double_key(t, "tol");
  s.fista.restart = bool_key(t, "restart");
  s.admm.rho = double_key(t, "rho");
  s.admm.cg_iterations = int_key(t, "cg_iters");
  s.pdhg.tau = double_key(t, "tau");
  s.pdhg.sigma = double_key(t, "sigma");
  s.fbp.filter = enum_key<FbpFilter>(t, "filter", parse_fbp_filter, fbp_filter_names());
  s.zero_filled.combine = enum_key<CoilCombine>(t, "combine", parse_coil_combine, "sos, sense");
  s.maps = enum_key<CoilMapSource>(t, "maps", parse_coil_map_source, coil_map_source_names());
  s.nonneg = bool_key(t, "nonneg");

  if (t.has("modality")) {
    const std::string mod = t.get_string("modality");
    const auto parsed = parse_modality(mod);
    if (!parsed) throw t.error("modality", "'" + mod + "'; expected mri, ct, denoise or inpaint");
    if (!runs_on(s.method, *parsed))
      throw t.error("modality", "method " + m.method_name() + " does not run on " + mod);
    m.modalities = {*parsed};
  } else if (s.method == Method::kUnrolled) {
    throw t.error("modality", "missing; an unrolled method needs modality = \"mri\", \"ct\", \"denoise\" or \"inpaint\"");
  } else {
    for (Modality mod : all_modalities())
      if (runs_on(s.method, mod)) m.modalities.push_back(mod);
  }
  const bool named_prior = s.prior.kind && *s.prior.kind != PriorKind::kNone && s.method != Method::kUnrolled;
  m.name = t.get_string_or("name", named_prior ? m.method_name() + "-" + std::string(to_string(*s.prior.kind))
                                               : m.method_name());
  if (m.name.empty() || m.name.find_first_of(",|\"\n/") != std::string::npos)
    throw t.error("name", "'" + m.name + "'; must be non-empty without , | \" / or newlines");
  m.optional = t.get_bool_or("optional", false);
  m.train_steps = t.get_int_or("train_steps", 0);
  if (m.train_steps < 0) throw t.error("train_steps", "must be >= 0");
  if (s.method == Method::kUnrolled) {
    const bool has_model = t.has("model"), has_train = t.has("train");
    if (has_model == has_train) throw t.error(has_model ? "train" : "model", "an unrolled method needs exactly one of model or train");
    if (has_model) {
      m.model_path = resolve(t.get_string("model"), base_dir);
      if (!file_exists(m.model_path)) throw t.error("model", "model file '" + m.model_path + "' does not exist");
      s.model = m.model_path;
    } else {
      m.train_config = resolve(t.get_string("train"), base_dir);
      if (!file_exists(m.train_config))
        throw t.error("train", "training config '" + m.train_config + "' does not exist");
      s.model = "models/" + m.name + ".h5";  // trained into the study folder; the runner sets the path
    }
  } else if (m.flow_prior()) {
    if (!t.has("model"))
      throw t.error("model", "missing; prior flow needs a flow model file (from `recofold train` with [model] kind = "
                             "\"flow\")");
    m.model_path = resolve(t.get_string("model"), base_dir);
    if (!file_exists(m.model_path)) throw t.error("model", "model file '" + m.model_path + "' does not exist");
    s.model = m.model_path;
    for (const char* k : {"train", "train_steps"})
      if (t.has(k)) throw t.error(k, std::string("only unrolled methods take ") + k + " (prior flow takes a trained flow)");
  } else {
    for (const char* k : {"model", "train", "train_steps", "optional"})
      if (t.has(k)) throw t.error(k, std::string("only unrolled methods and prior flow take ") + k);
  }
  return m;
}

}  // namespace

std::string StudyPhantom::truth_kind() const {
  if (measured) return measured->mri && measured->mri->non_cartesian() ? measured->truth_kind : "fully sampled";
  if (pixels) return "discrete";
  return "analytic";
}

bool StudyConfig::has_protocol(Modality modality) const {
  switch (modality) {
    case Modality::kMri: return mri.has_value();
    case Modality::kCt: return ct.has_value();
    case Modality::kDenoise: return denoise.has_value();
    case Modality::kInpaint: return inpaint.has_value();
  }
  return false;
}

bool StudyMethod::applies_to(Modality modality) const {
  return std::find(modalities.begin(), modalities.end(), modality) != modalities.end();
}

std::string StudyMethod::method_name() const { return std::string(to_string(spec.method)); }

std::string StudyMethod::prior_name(Modality modality) const {
  if (learned()) return "learned";
  if (!is_iterative(spec.method)) return "none";
  return std::string(to_string(*spec.with_defaults(modality).prior.kind));
}

const std::vector<std::string>& study_metric_names() {
  static const std::vector<std::string> names = {"psnr", "ssim", "nrmse", "hfen"};
  return names;
}

namespace {
// [mri] trajectory, spokes, interleaves and readout. With a trajectory and no
// pattern key, no Cartesian pattern runs (and accel / center do not apply).
void parse_trajectory_axes(const Config& t, const StudyConfig& c, MriAxes& a) {
  const auto only_with = [&](const char* key, const std::string& kinds) {
    if (t.has(key))
      throw t.error(key, std::string("applies to [mri] trajectory = ") + kinds + "; " +
                             (a.trajectories.empty() ? "this [mri] table has Cartesian patterns only (no trajectory key)"
                                                     : "trajectory lists none of them"));
  };
  if (t.has("trajectory")) a.trajectories = string_list(t, "trajectory");
  bool radial = false, spiral = false;
  for (const std::string& k : a.trajectories) {
    const auto kind = parse_trajectory_kind(k);
    if (!kind || *kind == TrajectoryKind::kFile)
      throw t.error("trajectory", "'" + k + "'; expected one of " + accepted_trajectory_kinds());
    (*kind == TrajectoryKind::kSpiral ? spiral : radial) = true;
  }
  for (size_t i = 0; i < a.trajectories.size(); ++i)
    for (size_t j = 0; j < i; ++j)
      if (a.trajectories[i] == a.trajectories[j])
        throw t.error("trajectory", "'" + a.trajectories[i] + "' is listed twice");
  if (radial) {
    if (!t.has("spokes")) throw t.error("spokes", "missing; the radial trajectories need spokes = [...] (1..100000)");
    a.spokes = int_list(t, "spokes", 1, 100000);
    if (t.has("readout")) {
      const std::vector<int> r = int_list(t, "readout", 2, 65536);
      if (r.size() != 1) throw t.error("readout", "must be a single value (samples per spoke)");
      a.readout = r.front();
    }
  } else {
    only_with("spokes", "\"radial\" or \"radial-golden\"");
    only_with("readout", "\"radial\" or \"radial-golden\"");
  }
  if (spiral) {
    if (!t.has("interleaves")) throw t.error("interleaves", "missing; a spiral trajectory needs interleaves = [...] (1..1024)");
    a.interleaves = int_list(t, "interleaves", 1, 1024);
  } else {
    only_with("interleaves", "\"spiral\"");
  }
  if (a.trajectories.empty()) return;
  if (!t.has("pattern")) {
    a.patterns.clear();
    for (const char* k : {"accel", "center"})
      if (t.has(k))
        throw t.error(k, "applies to Cartesian patterns; give pattern = [...] too (a trajectory's R is ny nx / samples)");
  }
  // The designs must be valid on the study grid (e.g. readout, hardware limits).
  for (const std::string& k : a.trajectories) {
    TrajectoryOptions o;
    o.kind = *parse_trajectory_kind(k);
    o.ny = c.ny;
    o.nx = c.nx;
    o.readout = a.readout;
    for (const std::string& e : o.validate())
      throw t.error(o.kind == TrajectoryKind::kSpiral ? "interleaves" : "readout", e);
  }
}

// The protocol tables [mri], [ct], [denoise] and [inpaint].
void parse_protocols(const Config& root, StudyConfig& c) {
  if (root.has("mri")) {
    const Config t = root.table("mri");
    t.expect_only({"pattern", "accel", "coils", "noise", "center", "trajectory", "spokes", "interleaves", "readout"});
    MriAxes a;
    parse_trajectory_axes(t, c, a);
    if (t.has("pattern")) a.patterns = string_list(t, "pattern");
    for (const auto& p : a.patterns)
      if (!parse_mask_pattern(p)) throw t.error("pattern", "'" + p + "'; expected one of " + accepted_mask_patterns());
    if (t.has("accel")) a.accelerations = number_list(t, "accel");
    check_range(t, "accel", a.accelerations, 1.0, 64.0, false, "in [1, 64]");
    if (t.has("coils")) a.coils = int_list(t, "coils", 1, 32);
    if (t.has("noise")) a.noise_sigmas = number_list(t, "noise");
    check_range(t, "noise", a.noise_sigmas, 0.0, 1e6, false, ">= 0");
    a.center_fraction = t.get_double_or("center", 0.08);
    if (!(a.center_fraction >= 0.0 && a.center_fraction < 1.0)) throw t.error("center", "must be in [0, 1)");
    c.mri = a;
  }
  if (root.has("ct")) {
    const Config t = root.table("ct");
    t.expect_only({"views", "arc", "photons", "mu"});
    CtAxes a;
    if (t.has("views")) a.views = int_list(t, "views", 2, 100000);
    if (t.has("arc")) a.arcs_deg = number_list(t, "arc");
    check_range(t, "arc", a.arcs_deg, 0.0, 360.0, true, "in (0, 360]");
    if (t.has("photons")) a.photons = number_list(t, "photons");
    check_range(t, "photons", a.photons, 0.0, 1e15, false, ">= 0 (0: noiseless)");
    a.mu_per_mm = t.get_double_or("mu", 0.0);
    if (!(a.mu_per_mm >= 0.0 && std::isfinite(a.mu_per_mm)))
      throw t.error("mu", "must be >= 0 (0: automatic, the largest line integral becomes 4)");
    c.ct = a;
  }
  if (root.has("denoise")) {
    const Config t = root.table("denoise");
    t.expect_only({"noise"});
    DenoiseAxes a;
    if (t.has("noise")) a.noise_sigmas = number_list(t, "noise");
    check_range(t, "noise", a.noise_sigmas, 0.0, 1e6, false, ">= 0");
    c.denoise = a;
  }
  if (root.has("inpaint")) {
    const Config t = root.table("inpaint");
    t.expect_only({"pattern", "keep", "noise", "block"});
    InpaintAxes a;
    if (t.has("pattern")) a.patterns = string_list(t, "pattern");
    for (const auto& p : a.patterns)
      if (!parse_pixel_pattern(p) || p == "file")
        throw t.error("pattern", "'" + p + "'; expected random or blocks");
    if (t.has("keep")) a.keeps = number_list(t, "keep");
    check_range(t, "keep", a.keeps, 0.0, 1.0, true, "in (0, 1]");
    if (t.has("noise")) a.noise_sigmas = number_list(t, "noise");
    check_range(t, "noise", a.noise_sigmas, 0.0, 1e6, false, ">= 0");
    if (t.has("block")) {
      const std::vector<int> b = int_list(t, "block", 1, 256);
      if (b.size() != 1) throw t.error("block", "must be a single value");
      a.block_size = b.front();
    }
    c.inpaint = a;
  }
}
}  // namespace

StudyConfig StudyConfig::load(const std::string& path) {
  const std::string text = read_text_file(path);
  std::string base = ".";
  const size_t slash = path.find_last_of('/');
  if (slash != std::string::npos) base = path.substr(0, slash == 0 ? 1 : slash);
  StudyConfig c = parse(text, path, base);
  return c;
}

namespace {

// Name (default: the file's stem), description, size, repetitions, seed, metrics, region.
void parse_study_header(const Config& root, const std::string& name, StudyConfig& c) {
  std::string stem = name;
  const size_t slash = stem.find_last_of('/');
  if (slash != std::string::npos) stem = stem.substr(slash + 1);
  const size_t dot = stem.find('.');
  if (dot != std::string::npos) stem = stem.substr(0, dot);
  c.name = root.get_string_or("name", stem);
  c.description = root.get_string_or("description", "");
  {
    const std::vector<int> size = int_list(root, "size", 16, 1024);
    if (size.size() > 2) throw root.error("size", "give N or [ny, nx]");
    c.ny = size[0];
    c.nx = size.size() == 2 ? size[1] : size[0];
  }
  c.repetitions = static_cast<int>(root.get_int_or("repetitions", 1));
  if (c.repetitions < 1 || c.repetitions > 10000) throw root.error("repetitions", "must be in 1..10000");
  const int64_t seed = root.get_int_or("seed", 1);
  if (seed < 0) throw root.error("seed", "must be >= 0");
  c.seed = static_cast<uint64_t>(seed);
  if (root.has("metrics")) {
    c.metrics = string_list(root, "metrics");
    for (const auto& m : c.metrics)
      if (std::find(study_metric_names().begin(), study_metric_names().end(), m) == study_metric_names().end())
        throw root.error("metrics", "'" + m + "'; expected any of " + join(study_metric_names()));
  }
  if (root.has("region")) {
    const Config r = root.table("region");
    r.expect_only({"radius"});
    c.region_radius = r.get_double("radius");
    if (!(c.region_radius > 0.0 && c.region_radius <= 1.0)) throw r.error("radius", "must be in (0, 1]");
  }
}

// One [[phantom]] table: a phantom table file, or `count` members of a family.
void parse_phantom_table(const Config& p, int table, const std::string& base_dir, StudyConfig& c) {
  p.expect_only({"table", "family", "count", "seed"});
  if (p.has("table") == p.has("family")) throw p.error("table", "give exactly one of table or family");
  if (p.has("table")) {
    for (const char* k : {"count", "seed"})
      if (p.has(k)) throw p.error(k, "only family phantoms take " + std::string(k));
    StudyPhantom sp;
    sp.table = table;
    sp.line = p.line();
    sp.table_path = resolve(p.get_string("table"), base_dir);
    if (!file_exists(sp.table_path)) throw p.error("table", "phantom table '" + sp.table_path + "' does not exist");
    std::string stem = sp.table_path.substr(sp.table_path.find_last_of('/') + 1);
    sp.label = stem.substr(0, stem.find('.'));
    c.phantoms.push_back(sp);
  } else {
    const std::string fam = p.get_string("family");
    if (!parse_family(fam)) throw p.error("family", "'" + fam + "'; expected one of " + family_names());
    const int64_t count = p.get_int_or("count", 1);
    if (count < 1 || count > 1000) throw p.error("count", "must be in 1..1000");
    const int64_t fseed = p.get_int_or("seed", static_cast<int64_t>(c.seed));
    if (fseed < 0) throw p.error("seed", "must be >= 0");
    for (int64_t i = 0; i < count; ++i) {
      StudyPhantom sp;
      sp.table = table;
      sp.line = p.line(p.has("seed") ? "seed" : "family");
      sp.family = fam;
      sp.family_seed = static_cast<uint64_t>(fseed);
      sp.family_index = static_cast<int>(i);
      sp.label = fam + "-" + std::to_string(fseed) + "-" + std::to_string(i);
      c.phantoms.push_back(sp);
    }
  }
}

// [[phantom]], [[measurement]] and [[object]] tables, distinct labels, and a note per real object.
void parse_study_objects(const Config& root, const std::string& base_dir, StudyConfig& c) {
  const std::vector<Config> phantoms = root.tables("phantom");
  const std::vector<Config> measured = root.tables("measurement"), images = root.tables("object");
  if (phantoms.empty() && measured.empty() && images.empty())
    throw root.error("phantom", "empty grid: no [[phantom]], [[measurement]] or [[object]] table");
  for (size_t k = 0; k < phantoms.size(); ++k) parse_phantom_table(phantoms[k], static_cast<int>(k), base_dir, c);
  for (const Config& t : measured) c.phantoms.push_back(measurement_object(t, c, base_dir));
  for (const Config& t : images) c.phantoms.push_back(image_object(t, c, base_dir));
  for (size_t i = 0; i < c.phantoms.size(); ++i)
    for (size_t j = 0; j < i; ++j)
      if (c.phantoms[i].label == c.phantoms[j].label)
        throw root.error(c.phantoms[i].measurement_path.empty() && c.phantoms[i].image_path.empty() ? "phantom" : "name",
                         "object '" + c.phantoms[i].label + "' is listed twice; give distinct names");
  for (const StudyPhantom& p : c.phantoms) {
    if (p.measured && p.measured->mri->non_cartesian())
      c.notes.push_back("Measurement '" + p.label + "' (" + p.measurement_path + ", " +
                        std::to_string(p.measured_coils) + " coils, " +
                        std::string(to_string(p.measured->mri->trajectory->kind)) + " trajectory, " +
                        std::to_string(p.measured->mri->trajectory->points()) +
                        " samples per coil): reconstructed as measured (its own trajectory; the study's patterns "
                        "and trajectories do not apply); truth = the file's (" + p.measured->truth_kind +
                        "); the noise axis is noise added to the measured samples.");
    else if (!p.measurement_path.empty())
      c.notes.push_back("Measurement '" + p.label + "' (" + p.measurement_path + ", " +
                        std::to_string(p.measured_coils) +
                        " coils): undersampled retrospectively with each MRI mask; truth = fully sampled (the "
                        "sensitivity-weighted coil combination of the fully sampled data, which carries the scan's "
                        "noise); the noise axis is noise added to the measured samples.");
    if (!p.image_path.empty())
      c.notes.push_back("Object '" + p.label + "' (" + p.image_path + ", slice " + std::to_string(p.slice) +
                        "): no analytic truth: inverse crime possible (simulated from the same pixels it is "
                        "scored against; truth discrete).");
  }
}

// The flow of a prior-flow method read once now: a file that is no flow, or a flow of another grid, is refused
// before any case runs (naming the key), not in every case.
namespace {
void check_flow_model(const Config& t, const StudyMethod& m, const StudyConfig& c) {
  try {
    find_learned_backend().backend->flow_neg_log_density(m.model_path, c.ny, c.nx, VecC::Zero(c.ny * c.nx), nullptr);
  } catch (const InputError& e) {
    throw t.error("model", "'" + m.model_path + "' cannot be the prior flow of this study: " + e.reason());
  }
}
}  // namespace

// [[method]] tables: each spec validated against every modality it runs on.
void parse_study_methods(const Config& root, const std::string& base_dir, StudyConfig& c) {
  const std::vector<Config> methods = root.tables("method");
  if (methods.empty()) throw root.error("method", "empty grid: no [[method]] table");
  for (size_t index = 0; index < methods.size(); ++index) {
    const Config& t = methods[index];
    StudyMethod m = parse_method_table(t, static_cast<int>(index), base_dir);
    // The spec against every modality the study runs it on.
    for (Modality mod : m.modalities)
      if (c.has_protocol(mod))
        throw_spec_errors(t, m.index, m.spec.validate(mod, Shape{c.ny, c.nx}));
    if (m.needs_learn() && !study_has_learn()) {
      if (m.optional) {
        c.notes.push_back("Learned method '" + m.name +
                          "' was left out: this build has no learn module (RECOFOLD_WITH_LIBTORCH=OFF).");
        continue;
      }
      throw t.error("method", std::string(m.learned() ? "unrolled" : "prior flow") +
                                  " needs the learn module; this build has none (RECOFOLD_WITH_LIBTORCH=OFF); "
                                  "set optional = true to skip it");
    }
    if (m.flow_prior()) check_flow_model(t, m, c);
    for (const StudyMethod& o : c.methods)
      for (const auto& mod : m.modalities)
        if (o.name == m.name && o.applies_to(mod))
          throw t.error("name", "'" + m.name + "' is used twice for " + modality_label(mod) +
                                    "; give the methods distinct names");
    c.methods.push_back(std::move(m));
  }
  bool any = false;
  for (const StudyMethod& m : c.methods)
    for (Modality mod : m.modalities) any = any || c.has_protocol(mod);
  if (!any) throw root.error("method", "empty grid: no method runs on the given protocols");
}

// Config text plus the bytes of every file it names.
std::string study_hash(const std::string& text, const StudyConfig& c) {
  std::string h = fnv1a_hex(text);
  for (const StudyPhantom& p : c.phantoms)
    if (!p.table_path.empty()) h += file_checksum(p.table_path);
    else if (!p.measurement_path.empty()) h += file_checksum(p.measurement_path);
    else if (p.pixels) h += fnv1a_hex(std::string(reinterpret_cast<const char*>(p.pixels->data()),
                                                  sizeof(cfloat) * static_cast<size_t>(p.pixels->size()))) +
                            std::to_string(p.slice);
  for (const StudyMethod& m : c.methods) {
    if (!m.model_path.empty()) h += file_checksum(m.model_path);
    if (!m.train_config.empty()) h += file_checksum(m.train_config);
  }
  return fnv1a_hex(h);
}

}  // namespace

StudyConfig StudyConfig::parse(const std::string& text, const std::string& name, const std::string& base_dir) {
  const Config root = Config::parse(text, name);
  root.expect_only({"name", "description", "size", "repetitions", "seed", "metrics", "region", "phantom",
                    "measurement", "object", "mri", "ct", "denoise", "inpaint", "keep", "method"});
  StudyConfig c;
  c.file = name;
  c.text = text;
  parse_study_header(root, name, c);
  parse_study_objects(root, base_dir, c);
  if (root.has("keep")) {
    const std::string keep = root.get_string("keep");
    if (keep != "all" && keep != "montage") throw root.error("keep", "'" + keep + "'; expected \"all\" or \"montage\"");
    c.keep_all = keep == "all";
  }
  parse_protocols(root, c);
  if (!c.mri && !c.ct && !c.denoise && !c.inpaint)
    throw root.error("mri", "empty grid: give an [mri], [ct], [denoise] or [inpaint] protocol table");
  if (!root.tables("measurement").empty() && !c.mri)
    throw root.tables("measurement").front().error("file", "a [[measurement]] object needs an [mri] protocol table (its masks)");
  if (c.mri && c.mri->patterns.empty()) {  // a Cartesian file is undersampled with masks only
    const std::vector<Config> measured = root.tables("measurement");
    size_t k = 0;
    for (const StudyPhantom& p : c.phantoms)
      if (p.measured && k++ < measured.size() && !p.measured->mri->non_cartesian())
        throw measured[k - 1].error("file", "'" + p.measurement_path +
                                                "' is Cartesian k-space, undersampled with the [mri] masks; the [mri] "
                                                "table has trajectories only (give pattern = [...] too)");
  }
  parse_study_methods(root, base_dir, c);
  c.hash = study_hash(text, c);
  return c;
}

}  // namespace recofold
