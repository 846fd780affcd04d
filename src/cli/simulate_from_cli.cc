// SPDX-License-Identifier: Apache-2.0
// `recofold simulate --from MEAS.h5 --mask M`: a mask applied to fully sampled k-space.
#include "simulate_from_cli.h"

#include <set>
#include <string>

#include "mri_cli.h"
#include "output_checks_cli.h"
#include "recofold/acquire/retrospective.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/config.h"
#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/io/measurement_file.h"
#include "recofold/ops/fft.h"
#include "recofold/sampling/mask.h"

namespace recofold::cli {

namespace {

}  // namespace

// The mask of --mask on the data grid [ny, nx]; `note` says when a spec's size was replaced.
SamplingMask mask_for_grid(const std::string& path, Index ny, Index nx, Provenance& prov, std::string& note) {
  if (!file_exists(path)) throw InputError(path, "--mask", not_a_file_reason(path));
  if (file_extension(path) != ".toml") {
    SamplingMask m = read_mask_file(path, "--mask");
    if (m.mask.shape != (Shape{ny, nx}))
      throw InputError(path, "--mask",
                       "mask shape " + m.mask.shape.to_string() + " differs from the data grid " +
                           Shape{ny, nx}.to_string() + " (a sampling spec .toml is drawn on the data grid)");
    prov.extra["mask_file"] = path;
    prov.extra["mask_checksum_fnv1a64"] = file_checksum(path);
    return m;
  }
  const Config cfg = Config::load(path);
  MaskOptions o = mask_options_from_config(cfg);
  if (cfg.has("size") && (o.ny != ny || o.nx != nx))
    note = "the spec's size " + std::to_string(o.ny) + "x" + std::to_string(o.nx) + " replaced by the data grid " +
           std::to_string(ny) + "x" + std::to_string(nx);
  o.ny = ny;
  o.nx = nx;
  SamplingMask m;
  try {
    m = make_mask(o);
  } catch (const InputError& e) {
    throw_with_flags(e, {}, path);
  }
  prov.extra["mask_spec"] = path;
  prov.extra["mask_spec_text"] = read_text_file(path);
  prov.extra["mask_seed"] = std::to_string(o.seed);
  if (!note.empty()) prov.extra["mask_grid"] = note;
  return m;
}

void run_simulate_from(const SimulateFromFlags& f, const CLI::App& sub, const Context& ctx) {
  // Every check before any work: bad input leaves no output.
  static const std::set<std::string> allowed = {"--from", "--mask", "--out", "--noise", "--seed", "--modality"};
  for (const CLI::Option* opt : sub.get_options()) {
    if (opt->count() == 0 || allowed.count(opt->get_name()) > 0) continue;
    throw InputError("", opt->get_name(),
                     "does not apply with --from (the acquisition is the measured one; only --mask, --noise and "
                     "--seed apply)");
  }
  if (sub.count("--modality") > 0) {
    const std::string given = sub.get_option("--modality")->as<std::string>();
    if (given != "mri")
      throw InputError("", "--modality", "'" + given + "'; --from undersamples MRI k-space (mri or leave it out)");
  }
  if (f.mask.empty()) throw InputError("", "--mask", "--from needs --mask FILE (.h5, image or sampling spec .toml)");
  require_output_path(f.out, "--out", {".h5"});
  require_distinct_output(f.out, "--out", {f.from, f.mask});
  if (!file_exists(f.from)) throw InputError(f.from, "--from", not_a_file_reason(f.from));
  RetrospectiveOptions o;
  o.added_noise_sigma = f.noise;
  o.seed = f.seed;
  {
    const auto errors = o.validate();
    if (!errors.empty()) throw InputError("", "--noise", errors.front());
  }

  const Measurement full = read_measurement_file(f.from);
  if (full.modality != Modality::kMri || !full.mri)
    throw InputError(f.from, "--from",
                     "is a " + std::string(to_string(full.modality)) + " measurement; --from needs MRI k-space");
  if (full.mri->non_cartesian())
    throw InputError(f.from, "--from",
                     "holds non-Cartesian samples (/mri/trajectory); --from undersamples Cartesian k-space with a mask");
  Provenance prov = make_provenance(ctx);
  for (const auto& [k, v] : full.provenance.extra) prov.extra["from." + k] = v;
  prov.extra["from_file"] = f.from;
  prov.extra["from_checksum_fnv1a64"] = file_checksum(f.from);
  prov.extra["seed"] = std::to_string(f.seed);
  prov.extra["truth"] = "fully sampled (the sensitivity-weighted coil combination of " + f.from + ")";
  std::string note;
  const SamplingMask mask = mask_for_grid(f.mask, full.ny, full.nx, prov, note);

  apply_threads(ctx);
  // A few one-off transforms: instant, deterministic FFTW_ESTIMATE plans (same bytes every run).
  set_fft_measure(false);
  Measurement m = undersample_retrospectively(full, mask, o, f.from);
  m.provenance = prov;
  write_measurement_file(f.out, m);
  const auto num = [](double v) { return format_sig(v, 4); };
  say(ctx, "wrote " + f.out + ": MRI k-space [" + std::to_string(m.mri->kspace.shape[0]) + ", " +
               std::to_string(m.ny) + ", " + std::to_string(m.nx) + "] from " + f.from + ", " + mask.pattern +
               ", R " + num(m.mri->acceleration) + ", noise sigma " + num(m.mri->noise_sigma) + " (" +
               num(full.mri->noise_sigma) + " of the data, " + num(f.noise) + " added), " +
               m.mri->coil_maps_source + " coil maps, truth fully sampled");
  if (!note.empty()) say(ctx, "  mask: " + note);
}

}  // namespace recofold::cli
