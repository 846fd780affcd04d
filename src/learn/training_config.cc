// SPDX-License-Identifier: Apache-2.0
// Training configuration: parsing, validation, JSON of trained_on, and the in-distribution check.
#include "recofold/learn/training_config.h"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/json.h"
#include "recofold/core/number_format.h"
#include "recofold/io/h5_file.h"
#include "recofold/phantom/family.h"
#include "recofold/acquire/image_problem.h"
#include "recofold/core/trajectory.h"
#include "recofold/sampling/mask.h"

namespace recofold {

namespace {

std::string num(double v) { return json_number(v); }

std::string join(const std::vector<std::string>& v) {
  std::string s;
  for (const auto& x : v) s += (s.empty() ? "" : ", ") + x;
  return s;
}

// A number (min = max) or a list [min, max].
void read_range(const Config& t, const std::string& key, double& lo, double& hi) {
  if (!t.has(key)) return;
  try {
    lo = hi = t.get_double(key);
    return;
  } catch (const InputError&) {
  }
  std::vector<double> v = t.get_double_list(key);
  if (v.size() != 2) throw t.error(key, "must be a number or a list [min, max]");
  if (!(v[0] <= v[1])) throw t.error(key, "[" + num(v[0]) + ", " + num(v[1]) + "]: min must not exceed max");
  lo = v[0];
  hi = v[1];
}

void read_int_range(const Config& t, const std::string& key, int& lo, int& hi) {
  double a = lo, b = hi;
  read_range(t, key, a, b);
  if (a != std::floor(a) || b != std::floor(b)) throw t.error(key, "must be whole numbers");
  // Bounded before the conversion (a larger double does not fit an int).
  if (std::fabs(a) > 1e9 || std::fabs(b) > 1e9) throw t.error(key, "must be whole numbers in -1e9..1e9");
  lo = static_cast<int>(a);
  hi = static_cast<int>(b);
}

std::vector<std::string> read_names(const Config& t, const std::string& key, std::vector<std::string> fallback) {
  if (!t.has(key)) return fallback;
  try {
    return {t.get_string(key)};
  } catch (const InputError&) {
  }
  auto v = t.get_string_list(key);
  if (v.empty()) throw t.error(key, "must not be empty");
  return v;
}

void throw_all(const std::string& file, const std::string& field, const std::vector<std::string>& errors) {
  if (errors.empty()) return;
  throw InputError(file, field, join(errors));
}

bool within(double v, double lo, double hi) {
  const double tol = 0.05;
  return v >= lo * (1 - tol) - 1e-12 && v <= hi * (1 + tol) + 1e-12;
}

std::string range_text(double lo, double hi) { return "[" + num(lo) + ", " + num(hi) + "]"; }

// Keys of the [data] table that belong to another modality: an error naming
// the key, not a silently ignored setting.
void refuse_foreign_keys(const Config& t, Modality modality) {
  std::vector<std::string> own = {"modality", "size", "families", "fov_mm", "truth"};
  switch (modality) {
    case Modality::kMri:
      own.insert(own.end(), {"patterns", "accel", "center", "noise", "coils", "trajectory", "readouts"});
      break;
    case Modality::kCt: own.insert(own.end(), {"views", "arc", "photons", "mu"}); break;
    case Modality::kDenoise: own.insert(own.end(), {"noise"}); break;
    case Modality::kInpaint: own.insert(own.end(), {"noise", "patterns", "keep"}); break;
  }
  for (const char* k : {"patterns", "accel", "center", "noise", "coils", "trajectory", "readouts", "views", "arc",
                        "photons", "mu", "keep"})
    if (t.has(k) && std::find(own.begin(), own.end(), k) == own.end())
      throw t.error(k, "does not apply to modality " + std::string(to_string(modality)));
}

}  // namespace

std::vector<std::string> TrainingConditions::validate() const {
  std::vector<std::string> e;
  auto bad = [&](const std::string& k, const std::string& v, const std::string& rule) {
    e.push_back("data." + k + " = " + v + "; " + rule);
  };
  const bool image_problem = modality == Modality::kDenoise || modality == Modality::kInpaint;
  if (ny < 8 || nx < 8 || ny > 4096 || nx > 4096)
    bad("size", std::to_string(ny) + "x" + std::to_string(nx), "each side must be in 8..4096");
  if (families.empty()) bad("families", "[]", "must name at least one family");
  for (const auto& f : families)
    if (!parse_family(f)) bad("families", f, "must be one of " + family_names());
  if (!trajectory.empty()) {
    const auto kind = parse_trajectory_kind(trajectory);
    if (modality != Modality::kMri) bad("trajectory", trajectory, "applies to mri only");
    else if (!kind || *kind == TrajectoryKind::kFile)
      bad("trajectory", trajectory, "must be radial, radial-golden or spiral");
    if (readouts_min < 1 || readouts_max > 100000 || readouts_min > readouts_max)
      bad("readouts", range_text(readouts_min, readouts_max),
          "must lie in 1..100000 (spokes or spiral interleaves; required with trajectory)");
  } else if (readouts_min != 0 || readouts_max != 0) {
    bad("readouts", range_text(readouts_min, readouts_max), "applies only with trajectory");
  }
  if (modality == Modality::kMri) {
    if (patterns.empty()) bad("patterns", "[]", "must name at least one pattern");
    for (const auto& p : patterns)
      if (!parse_mask_pattern(p)) bad("patterns", p, "must be one of " + accepted_mask_patterns());
    if (!(accel_min >= 1 && accel_max <= 32)) bad("accel", range_text(accel_min, accel_max), "must lie in [1, 32]");
    if (!(center_fraction >= 0 && center_fraction <= 0.5)) bad("center", num(center_fraction), "must be in [0, 0.5]");
    if (!(noise_min >= 0 && std::isfinite(noise_max))) bad("noise", range_text(noise_min, noise_max), "must be >= 0");
    if (coils_min < 1 || coils_max > 32) bad("coils", range_text(coils_min, coils_max), "must lie in 1..32");
  } else if (image_problem) {
    if (!(noise_min >= 0 && std::isfinite(noise_max))) bad("noise", range_text(noise_min, noise_max), "must be >= 0");
    if (modality == Modality::kInpaint) {
      if (patterns.empty()) bad("patterns", "[]", "must name at least one pattern");
      for (const auto& p : patterns)
        if (!parse_pixel_pattern(p)) bad("patterns", p, "must be random or blocks");
      if (!(keep_min > 0 && keep_max <= 1)) bad("keep", range_text(keep_min, keep_max), "must lie in (0, 1]");
    }
    if (truth != "discrete")
      bad("truth", truth, std::string(to_string(modality)) + " observes the pixels themselves: must be discrete");
  } else {
    if (views_min < 2 || views_max > 2000) bad("views", range_text(views_min, views_max), "must lie in 2..2000");
    if (!(arc_deg > 0 && arc_deg <= 360)) bad("arc", num(arc_deg), "must be in (0, 360]");
    if (!(photons_min >= 0 && std::isfinite(photons_max)))
      bad("photons", range_text(photons_min, photons_max), "must be >= 0");
    if (photons_min == 0 && photons_max > 0)
      bad("photons", range_text(photons_min, photons_max), "0 (noiseless) cannot be mixed with counts");
    if (!(mu_per_mm >= 0 && std::isfinite(mu_per_mm))) bad("mu", num(mu_per_mm), "must be >= 0 (0: automatic)");
  }
  if (!(fov_mm > 0 && std::isfinite(fov_mm))) bad("fov_mm", num(fov_mm), "must be > 0");
  if (truth != "analytic" && truth != "discrete") bad("truth", truth, "must be analytic or discrete");
  return e;
}

std::string TrainingConditions::to_json() const {
  JsonObjectWriter w;
  w.add("modality", std::string(to_string(modality)));
  w.add("ny", static_cast<long long>(ny));
  w.add("nx", static_cast<long long>(nx));
  w.add("families", families);
  if (modality == Modality::kMri) {
    w.add("patterns", patterns);
    w.add("accel", std::vector<double>{accel_min, accel_max});
    w.add("center", center_fraction);
    w.add("noise", std::vector<double>{noise_min, noise_max});
    w.add("coils", std::vector<double>{double(coils_min), double(coils_max)});
    if (!trajectory.empty()) {
      w.add("trajectory", trajectory);
      w.add("readouts", std::vector<double>{double(readouts_min), double(readouts_max)});
    }
  } else if (modality == Modality::kDenoise || modality == Modality::kInpaint) {
    w.add("noise", std::vector<double>{noise_min, noise_max});
    if (modality == Modality::kInpaint) {
      w.add("patterns", patterns);
      w.add("keep", std::vector<double>{keep_min, keep_max});
    }
  } else {
    w.add("views", std::vector<double>{double(views_min), double(views_max)});
    w.add("arc", arc_deg);
    w.add("photons", std::vector<double>{photons_min, photons_max});
    w.add("mu", mu_per_mm);
  }
  w.add("fov_mm", fov_mm);
  w.add("truth", truth);
  if (!seeds.empty()) {
    std::string list = "[";
    for (size_t i = 0; i < seeds.size(); ++i) {
      JsonObjectWriter r;
      r.add("use", seeds[i].use);
      r.add("families", seeds[i].families);
      r.add_raw("seed", std::to_string(seeds[i].seed));
      r.add_raw("first", std::to_string(seeds[i].first));
      r.add_raw("last", std::to_string(seeds[i].last));
      list += (i ? ", " : "") + r.str();
    }
    w.add_raw("seeds", list + "]");
  }
  return w.str();
}

TrainingConditions TrainingConditions::from_json(const std::string& json, const std::string& file,
                                                 const std::string& field) {
  JsonValue doc = parse_json(json, file, field);
  if (doc.kind != JsonValue::Kind::kObject) throw InputError(file, field, "must be a JSON object");
  TrainingConditions c;
  auto number = [&](const std::string& k, const JsonValue& v) {
    if (v.kind != JsonValue::Kind::kNumber) throw InputError(file, field, "key '" + k + "' must be a number");
    return v.number;
  };
  auto pair = [&](const std::string& k, const JsonValue& v, double& lo, double& hi) {
    if (v.kind != JsonValue::Kind::kArray || v.items.size() != 2)
      throw InputError(file, field, "key '" + k + "' must be [min, max]");
    lo = number(k, v.items[0]);
    hi = number(k, v.items[1]);
  };
  auto names = [&](const std::string& k, const JsonValue& v) {
    std::vector<std::string> out;
    if (v.kind != JsonValue::Kind::kArray) throw InputError(file, field, "key '" + k + "' must be a list");
    for (const auto& i : v.items) {
      if (i.kind != JsonValue::Kind::kString) throw InputError(file, field, "key '" + k + "' must list strings");
      out.push_back(i.text);
    }
    return out;
  };
  for (const auto& [k, v] : doc.members) {
    double a = 0, b = 0;
    if (k == "modality") {
      if (v.kind != JsonValue::Kind::kString) throw InputError(file, field, "key 'modality' must be a string");
      const auto parsed = parse_modality(v.text);
      if (!parsed) throw InputError(file, field, "key 'modality' = '" + v.text + "'; expected mri, ct, denoise or inpaint");
      c.modality = *parsed;
    } else if (k == "ny") {
      c.ny = static_cast<Index>(number(k, v));
    } else if (k == "nx") {
      c.nx = static_cast<Index>(number(k, v));
    } else if (k == "families") {
      c.families = names(k, v);
    } else if (k == "patterns") {
      c.patterns = names(k, v);
    } else if (k == "accel") {
      pair(k, v, c.accel_min, c.accel_max);
    } else if (k == "center") {
      c.center_fraction = number(k, v);
    } else if (k == "noise") {
      pair(k, v, c.noise_min, c.noise_max);
    } else if (k == "keep") {
      pair(k, v, c.keep_min, c.keep_max);
    } else if (k == "coils") {
      pair(k, v, a, b);
      c.coils_min = static_cast<int>(a);
      c.coils_max = static_cast<int>(b);
    } else if (k == "trajectory") {
      if (v.kind != JsonValue::Kind::kString) throw InputError(file, field, "key 'trajectory' must be a string");
      c.trajectory = v.text;
    } else if (k == "readouts") {
      pair(k, v, a, b);
      c.readouts_min = static_cast<int>(a);
      c.readouts_max = static_cast<int>(b);
    } else if (k == "views") {
      pair(k, v, a, b);
      c.views_min = static_cast<int>(a);
      c.views_max = static_cast<int>(b);
    } else if (k == "arc") {
      c.arc_deg = number(k, v);
    } else if (k == "photons") {
      pair(k, v, c.photons_min, c.photons_max);
    } else if (k == "mu") {
      c.mu_per_mm = number(k, v);
    } else if (k == "fov_mm") {
      c.fov_mm = number(k, v);
    } else if (k == "truth") {
      if (v.kind != JsonValue::Kind::kString) throw InputError(file, field, "key 'truth' must be a string");
      c.truth = v.text;
    } else if (k == "seeds") {
      if (v.kind != JsonValue::Kind::kArray) throw InputError(file, field, "key 'seeds' must be a list");
      for (const auto& item : v.items) {
        if (item.kind != JsonValue::Kind::kObject) throw InputError(file, field, "'seeds' must list objects");
        SeedRange r;
        auto whole = [&](const char* key) {
          const JsonValue* x = item.find(key);
          if (!x || x->kind != JsonValue::Kind::kNumber || x->number < 0 || x->number != std::floor(x->number) ||
              x->number > 9007199254740991.0)
            throw InputError(file, field, std::string("seeds: '") + key + "' must be a whole number in 0..2^53-1");
          return static_cast<uint64_t>(x->number);
        };
        const JsonValue* use = item.find("use");
        if (!use || use->kind != JsonValue::Kind::kString) throw InputError(file, field, "seeds: 'use' must be a string");
        r.use = use->text;
        const JsonValue* fam = item.find("families");
        if (!fam) throw InputError(file, field, "seeds: 'families' is missing");
        r.families = names("seeds.families", *fam);
        r.seed = whole("seed");
        r.first = whole("first");
        r.last = whole("last");
        if (r.last < r.first) throw InputError(file, field, "seeds: 'last' must not be below 'first'");
        c.seeds.push_back(std::move(r));
      }
    } else {
      throw InputError(file, field, "unknown key '" + k + "'");
    }
  }
  throw_all(file, field, c.validate());
  return c;
}

TrainingConditions TrainingConditions::from_config(const Config& t) {
  t.expect_only({"modality", "size", "families", "patterns", "accel", "center", "noise", "coils", "trajectory",
                 "readouts", "views", "arc", "photons", "mu", "fov_mm", "truth", "keep"});
  TrainingConditions c;
  const std::string modality = t.get_string("modality");
  const auto parsed = parse_modality(modality);
  if (!parsed) throw t.error("modality", "'" + modality + "' must be mri, ct, denoise or inpaint");
  c.modality = *parsed;
  refuse_foreign_keys(t, c.modality);
  if (c.modality == Modality::kCt) c.families = {"ellipses"};
  if (c.modality == Modality::kDenoise || c.modality == Modality::kInpaint) {
    c.truth = "discrete";
    c.patterns = {"random"};
  }
  double lo = double(c.ny), hi = double(c.nx);
  read_range(t, "size", lo, hi);
  if (lo != std::floor(lo) || hi != std::floor(hi)) throw t.error("size", "must be whole numbers");
  // Bounded before the conversion (a larger double does not fit an Index); the
  // checks of the conditions then give the exact range.
  if (lo < 8 || lo > 4096 || hi < 8 || hi > 4096) throw t.error("size", "each side must be in 8..4096");
  c.ny = static_cast<Index>(lo);
  c.nx = static_cast<Index>(hi);
  c.families = read_names(t, "families", c.families);
  c.patterns = read_names(t, "patterns", c.patterns);
  read_range(t, "accel", c.accel_min, c.accel_max);
  c.center_fraction = t.get_double_or("center", c.center_fraction);
  read_range(t, "noise", c.noise_min, c.noise_max);
  read_range(t, "keep", c.keep_min, c.keep_max);
  read_int_range(t, "coils", c.coils_min, c.coils_max);
  c.trajectory = t.get_string_or("trajectory", "");
  if (!c.trajectory.empty() && (t.has("patterns") || t.has("accel")))
    throw t.error(t.has("patterns") ? "patterns" : "accel",
                  "does not apply with trajectory (a trajectory's acceleration is ny nx / its samples)");
  read_int_range(t, "readouts", c.readouts_min, c.readouts_max);
  read_int_range(t, "views", c.views_min, c.views_max);
  c.arc_deg = t.get_double_or("arc", c.arc_deg);
  read_range(t, "photons", c.photons_min, c.photons_max);
  c.mu_per_mm = t.get_double_or("mu", c.mu_per_mm);
  c.fov_mm = t.get_double_or("fov_mm", c.fov_mm);
  c.truth = t.get_string_or("truth", c.truth);
  throw_all(t.file(), t.dotted(""), c.validate());
  return c;
}

std::string TrainingConditions::outside(const Measurement& m) const {
  std::vector<std::string> out;
  if (m.mri) {
    const MriData& d = *m.mri;
    if (!trajectory.empty()) {
      if (!d.non_cartesian()) {
        out.push_back("Cartesian mask '" + d.pattern + "' (trained on a " + trajectory + " trajectory)");
      } else {
        const std::string kind(to_string(d.trajectory->kind));
        if (kind != trajectory) out.push_back("trajectory " + kind + " (trained on " + trajectory + ")");
        const int readouts = static_cast<int>(d.trajectory->readouts);
        if (readouts < readouts_min || readouts > readouts_max)
          out.push_back("readouts " + std::to_string(readouts) + " outside " + range_text(readouts_min, readouts_max));
      }
    } else {
      if (d.non_cartesian())
        out.push_back("non-Cartesian " + std::string(to_string(d.trajectory->kind)) + " trajectory (trained on "
                      "Cartesian masks " + join(patterns) + ")");
      else if (std::find(patterns.begin(), patterns.end(), d.pattern) == patterns.end())
        out.push_back("pattern '" + d.pattern + "' not in [" + join(patterns) + "]");
      if (!within(d.acceleration, accel_min, accel_max))
        out.push_back("acceleration " + format_fixed(d.acceleration, 2) + " outside " + range_text(accel_min, accel_max));
    }
    if (!within(d.noise_sigma, noise_min, noise_max))
      out.push_back("noise sigma " + num(d.noise_sigma) + " outside " + range_text(noise_min, noise_max));
    const int coils = d.kspace.shape.rank() == 3 ? static_cast<int>(d.kspace.shape[0]) : 1;
    if (coils < coils_min || coils > coils_max)
      out.push_back("coils " + std::to_string(coils) + " outside " + range_text(coils_min, coils_max));
  } else if (m.image) {
    const ImageProblemData& d = *m.image;
    if (!within(d.noise_sigma, noise_min, noise_max))
      out.push_back("noise sigma " + num(d.noise_sigma) + " outside " + range_text(noise_min, noise_max));
    if (m.modality == Modality::kInpaint) {
      if (std::find(patterns.begin(), patterns.end(), d.pattern) == patterns.end())
        out.push_back("pixel pattern '" + d.pattern + "' not in [" + join(patterns) + "]");
      if (!within(d.kept_fraction, keep_min, keep_max))
        out.push_back("kept fraction " + format_fixed(d.kept_fraction, 3) + " outside " + range_text(keep_min, keep_max));
    }
  } else if (m.ct) {
    const CtData& d = *m.ct;
    const int views = static_cast<int>(d.angles_rad.size());
    if (views < views_min || views > views_max)
      out.push_back("views " + std::to_string(views) + " outside " + range_text(views_min, views_max));
    const bool noiseless = d.photons_per_ray <= 0;
    if (noiseless != (photons_max <= 0) || (!noiseless && !within(d.photons_per_ray, photons_min, photons_max)))
      out.push_back("photons " + num(d.photons_per_ray) + " outside " + range_text(photons_min, photons_max));
    if (d.beam != CtBeam::kParallel)
      out.push_back("geometry '" + std::string(to_string(d.beam)) + "' (trained on parallel)");
  }
  std::string s;
  for (const auto& o : out) s += (s.empty() ? "" : "; ") + o;
  return s;
}

std::vector<std::string> TrainOptions::validate() const {
  std::vector<std::string> e;
  auto bad = [&](const std::string& k, const std::string& v, const std::string& rule) {
    e.push_back("train." + k + " = " + v + "; " + rule);
  };
  if (steps < 1) bad("steps", std::to_string(steps), "must be >= 1");
  if (batch < 1 || batch > 256) bad("batch", std::to_string(batch), "must be in 1..256");
  if (!(learning_rate > 0 && std::isfinite(learning_rate))) bad("learning_rate", num(learning_rate), "must be > 0");
  if (schedule != "constant" && schedule != "cosine" && schedule != "step")
    bad("schedule", schedule, "must be constant, cosine or step");
  if (!(lr_final_fraction >= 0 && lr_final_fraction <= 1)) bad("lr_final_fraction", num(lr_final_fraction), "must be in [0, 1]");
  if (step_every < 1) bad("step_every", std::to_string(step_every), "must be >= 1");
  if (warmup_steps < 0) bad("warmup_steps", std::to_string(warmup_steps), "must be >= 0");
  if (!(clip_norm >= 0 && std::isfinite(clip_norm))) bad("clip_norm", num(clip_norm), "must be >= 0");
  if (loss != "mse" && loss != "l1") bad("loss", loss, "must be mse or l1");
  if (!(ssim_weight >= 0 && std::isfinite(ssim_weight))) bad("ssim_weight", num(ssim_weight), "must be >= 0");
  if (validation_count < 1 || validation_count > 10000)
    bad("validation_count", std::to_string(validation_count), "must be in 1..10000");
  if (validation_every < 1) bad("validation_every", std::to_string(validation_every), "must be >= 1");
  if (checkpoint_every < 1) bad("checkpoint_every", std::to_string(checkpoint_every), "must be >= 1");
  if (threads < 0) bad("threads", std::to_string(threads), "must be >= 0");
  if (!(max_minutes >= 0 && std::isfinite(max_minutes))) bad("max_minutes", num(max_minutes), "must be >= 0");
  return e;
}

TrainOptions TrainOptions::from_config(const Config& t) {
  t.expect_only({"steps", "batch", "learning_rate", "schedule", "lr_final_fraction", "step_every",
                 "warmup_steps", "clip_norm", "loss", "ssim_weight", "validation_count",
                 "validation_every", "checkpoint_every", "seed", "threads", "max_minutes"});
  TrainOptions o;
  o.steps = t.get_int_or("steps", o.steps);
  o.batch = static_cast<int>(t.get_int_or("batch", o.batch));
  o.learning_rate = t.get_double_or("learning_rate", o.learning_rate);
  o.schedule = t.get_string_or("schedule", o.schedule);
  o.lr_final_fraction = t.get_double_or("lr_final_fraction", o.lr_final_fraction);
  o.step_every = t.get_int_or("step_every", o.step_every);
  o.warmup_steps = t.get_int_or("warmup_steps", o.warmup_steps);
  o.clip_norm = t.get_double_or("clip_norm", o.clip_norm);
  o.loss = t.get_string_or("loss", o.loss);
  o.ssim_weight = t.get_double_or("ssim_weight", o.ssim_weight);
  o.validation_count = static_cast<int>(t.get_int_or("validation_count", o.validation_count));
  o.validation_every = t.get_int_or("validation_every", o.validation_every);
  o.checkpoint_every = t.get_int_or("checkpoint_every", o.checkpoint_every);
  const int64_t seed = t.get_int_or("seed", static_cast<int64_t>(o.seed));
  if (seed < 0 || seed > (int64_t{1} << 53) - 1)
    throw t.error("seed", std::to_string(seed) + "; must be in 0..2^53-1 (written exactly into trained_on)");
  o.seed = static_cast<uint64_t>(seed);
  o.threads = static_cast<int>(t.get_int_or("threads", o.threads));
  o.max_minutes = t.get_double_or("max_minutes", o.max_minutes);
  throw_all(t.file(), t.dotted(""), o.validate());
  return o;
}

TrainingConfig TrainingConfig::parse(const std::string& text, const std::string& name) {
  Config root = Config::parse(text, name);
  root.expect_only({"model", "data", "train", "description"});
  TrainingConfig c;
  c.file = name;
  c.text = text;
  c.data = TrainingConditions::from_config(root.table("data"));
  const bool has_model = root.has("model");
  if (has_model) {
    const Config model = root.table("model");
    c.kind = model.get_string_or("kind", "unrolled");
    if (c.kind != "unrolled" && c.kind != "flow")
      throw model.error("kind", "'" + c.kind + "' is not one of unrolled, flow");
  }
  if (c.kind == "flow") {
    const Config model = root.table("model");
    std::vector<std::string> keys = FlowArchitecture::config_keys();
    keys.push_back("kind");
    model.expect_only(keys);
    c.flow = FlowArchitecture::from_config(model);
    c.flow.ny = c.data.ny;
    c.flow.nx = c.data.nx;
    throw_all(name, "model", c.flow.validate());
  } else {
    c.architecture = has_model ? UnrolledArchitecture::from_config(root.table("model"), &c.flow_model)
                               : UnrolledArchitecture{};
    c.architecture.modality = c.data.modality;
    c.architecture.ny = c.data.ny;
    c.architecture.nx = c.data.nx;
    if (!c.flow_model.empty()) {
      try {
        H5Reader r(c.flow_model);
        if (!r.is_group("/model") || !r.has_attr("/model", "kind") || r.attr_string("/model", "kind") != "flow")
          throw InputError(c.flow_model, "/model@kind", "not a flow model file");
        c.architecture.flow = FlowArchitecture::from_json(r.attr_string("/model", "architecture"), c.flow_model);
      } catch (const InputError& e) {
        throw InputError(name, "model.flow_model", std::string("cannot use '") + c.flow_model + "': " + e.what());
      }
    }
    throw_all(name, "model", c.architecture.validate());
    if (c.architecture.dc == LearnedDc::kReplace && c.data.coils_max > 1)
      throw InputError(name, "model.dc", "replace needs single-coil data (data.coils = 1)");
  }
  c.train = root.has("train") ? TrainOptions::from_config(root.table("train")) : TrainOptions{};
  return c;
}

TrainingConfig TrainingConfig::load(const std::string& path) { return parse(read_text_file(path), path); }

}  // namespace recofold
