// SPDX-License-Identifier: Apache-2.0
// `recofold mask`: design a k-space sampling mask (or load one), analyse its PSF, write the mask, report and picture.
#include <memory>
#include <string>

#include "cli_common.h"
#include "mri_cli.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/config.h"
#include "recofold/core/error.h"
#include "recofold/io/image_export.h"
#include "recofold/ops/fft.h"
#include "recofold/sampling/mask.h"
#include "recofold/sampling/mask_analysis.h"

namespace recofold::cli {

namespace {

// Library field paths of MaskOptions ("mask.accel") as flags and as keys of a spec file.
const std::vector<FieldFlag>& mask_flags() {
  static const std::vector<FieldFlag> map = {
      {"mask.accel", "--accel"},   {"mask.center", "--center"}, {"mask.size", "--size"},
      {"mask.power", "--power"},   {"mask.sigma", "--sigma"},   {"mask.radius_growth", "--radius-growth"},
      {"mask.spokes", "--spokes"},
  };
  return map;
}
const std::vector<FieldFlag>& mask_spec_keys() {
  static const std::vector<FieldFlag> map = {
      {"mask.accel", "accel"}, {"mask.center", "center"}, {"mask.size", "size"},
      {"mask.power", "power"}, {"mask.sigma", "sigma"},   {"mask.radius_growth", "radius_growth"},
      {"mask.spokes", "spokes"},
  };
  return map;
}

struct MaskFlags {
  std::string pattern, size = "256", spec, from, out, report, png;
  std::string density = "polynomial";
  double accel = MaskOptions{}.acceleration;
  double center = MaskOptions{}.center_fraction;
  uint64_t seed = 0;
  double power = MaskOptions{}.density_power;
  double sigma = MaskOptions{}.density_sigma;
  double radius_growth = MaskOptions{}.radius_growth;
  int spokes = 0;
};

void run_mask(const MaskFlags& f, const CLI::App& sub, const Context& ctx) {
  require_output_path(f.out, "--out", {".h5"});
  if (!f.report.empty()) require_output_path(f.report, "--report", {".json"});
  if (!f.png.empty()) require_output_path(f.png, "--png", {".png"});
  const int sources = (!f.pattern.empty()) + (!f.spec.empty()) + (!f.from.empty());
  if (sources != 1) throw InputError("", "--pattern", "give exactly one of --pattern NAME, --spec FILE or --from FILE");
  const char* pattern_flags[] = {"--size", "--accel", "--center", "--seed", "--density", "--power", "--sigma",
                                 "--radius-growth", "--spokes"};
  if (f.pattern.empty())
    for (const char* flag : pattern_flags)
      if (sub.count(flag) > 0) throw InputError("", flag, "only applies with --pattern (a spec file sets it)");

  apply_threads(ctx);
  // A few one-off transforms: instant, deterministic FFTW_ESTIMATE plans (same bytes every run).
  set_fft_measure(false);
  SamplingMask mask;
  Provenance prov = make_provenance(ctx);
  if (!f.from.empty()) {
    mask = read_mask_file(f.from, "--from");
    prov.extra["mask_source"] = f.from;
    prov.extra["mask_source_checksum_fnv1a64"] = file_checksum(f.from);
  } else {
    MaskOptions o;
    if (!f.spec.empty()) {
      o = mask_options_from_config(Config::load(f.spec));
      prov.extra["spec"] = f.spec;
      prov.extra["spec_text"] = read_text_file(f.spec);
    } else {
      const auto p = parse_mask_pattern(f.pattern);
      if (!p) throw InputError("", "--pattern", "unknown pattern '" + f.pattern + "' (expected one of: " + accepted_mask_patterns() + ")");
      const auto d = parse_density_profile(f.density);
      if (!d) throw InputError("", "--density", "unknown density '" + f.density + "' (expected polynomial or gaussian)");
      o.pattern = *p;
      std::tie(o.ny, o.nx) = parse_grid_size(f.size);
      o.acceleration = f.accel;
      o.center_fraction = f.center;
      o.seed = f.seed;
      o.density = *d;
      o.density_power = f.power;
      o.density_sigma = f.sigma;
      o.radius_growth = f.radius_growth;
      o.spokes = f.spokes;
      if (sub.count("--spokes") > 0 && sub.count("--accel") > 0)
        throw InputError("", "--spokes", "give either --spokes or --accel for radial patterns, not both");
      if (sub.count("--spokes") > 0 && o.pattern != MaskPattern::kRadial && o.pattern != MaskPattern::kRadialGolden)
        throw InputError("", "--spokes", "only applies to radial and radial-golden");
    }
    try {
      mask = make_mask(o);
    } catch (const InputError& e) {
      if (!f.spec.empty()) throw_with_flags(e, mask_spec_keys(), f.spec);
      throw_with_flags(e, mask_flags());
    }
    prov.extra["seed"] = std::to_string(o.seed);
  }
  const MaskAnalysis a = analyse_mask(mask.mask);
  write_mask_file(f.out, mask, prov);
  say(ctx, "wrote " + f.out + ": " + mask_summary(mask, a));
  if (!f.report.empty()) {
    write_text_atomic(f.report, mask_report_json(mask, a) + "\n");
    say(ctx, "wrote " + f.report);
  }
  if (!f.png.empty()) {
    PngWindow w;
    w.auto_window = false;
    write_png(f.png, mask_picture(mask.mask, a), w);
    say(ctx, "wrote " + f.png + " (left: mask, white = sampled; right: log10 |PSF|, 0 to -60 dB)");
  }
}

}  // namespace

void register_cmd_mask(CLI::App& app, Context& ctx) {
  auto f = std::make_shared<MaskFlags>();
  CLI::App* sub = app.add_subcommand("mask", "Design a k-space sampling mask and analyse its point-spread function");
  sub->add_option("--pattern", f->pattern, "Pattern: " + accepted_mask_patterns());
  sub->add_option("--spec", f->spec, "Sampling spec TOML (e.g. sampling-masks/lines-4x-256.toml) instead of flags");
  sub->add_option("--from", f->from, "Take an existing mask (.h5 mask/measurement/image file, or .png; nonzero = sampled)");
  sub->add_option("--size", f->size, "Grid N or NYxNX (default 256); rows are phase encodes")->capture_default_str();
  sub->add_option("--accel", f->accel, "Acceleration R = ny nx / samples, 1..64 (default 4)");
  sub->add_option("--center", f->center,
                  "Fully sampled centre fraction: of the rows (lines-*) or of each axis (points-vd, poisson-disc); "
                  "default 0.08");
  sub->add_option("--seed", f->seed, "Seed of the random patterns (default 0)");
  sub->add_option("--density", f->density, "Variable density: polynomial (1-k)^p or gaussian (default polynomial)");
  sub->add_option("--power", f->power, "Polynomial density power p (default 2)");
  sub->add_option("--sigma", f->sigma, "Gaussian density sigma, in units of the k-space radius (default 0.35)");
  sub->add_option("--radius-growth", f->radius_growth,
                  "Poisson-disc: radius at the k-space edge is (1 + G) times the centre radius (default 2)");
  sub->add_option("--spokes", f->spokes, "Radial: exact number of spokes (then R is a result, not a request)");
  sub->add_option("--out", f->out, "Mask file (.h5)")->required();
  sub->add_option("--report", f->report, "JSON report: R, calibration size, PSF and wavelet-domain side-lobes");
  sub->add_option("--png", f->png, "Picture: the mask and its log-magnitude PSF side by side");
  sub->footer(std::string(kResearchUseLine));
  sub->callback([f, sub, &ctx] { run_mask(*f, *sub, ctx); });
}

}  // namespace recofold::cli
