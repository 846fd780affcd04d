// SPDX-License-Identifier: Apache-2.0
// `recofold simulate`: make an MRI (k-space) or CT (sinogram) measurement file from a phantom.
#include <cmath>
#include <limits>
#include <memory>
#include <optional>
#include <string>

#include "cli_common.h"
#include "output_checks_cli.h"
#include "ct_cli.h"
#include "mri_cli.h"
#include "recofold/acquire/image_problem.h"
#include "simulate_from_cli.h"
#include "recofold/acquire/mri.h"
#include "recofold/acquire/mri_trajectory.h"
#include "trajectory_cli.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/io/image_export.h"
#include "recofold/ops/fft.h"
#include "recofold/io/measurement_file.h"
#include "recofold/phantom/phantom_table.h"

namespace recofold::cli {

namespace {

const char* kMriGroup = "MRI (--modality mri)";
const char* kImageGroup = "Inpainting (--modality inpaint)";
const char* kNoiseGroup = "Noise (--modality mri | denoise | inpaint)";

struct SimulateFlags {
  std::string phantom, modality, truth, out, mask, pattern = "random", pixel_mask, from, trajectory;
  double keep = 0.5;
  int block_size = 8;
  int index = 0;
  uint64_t seed = 0;
  int coils = 1;
  double noise = 0.0;
  double snr_db = std::numeric_limits<double>::quiet_NaN();
  double coil_correlation = 0.0;
  int oversampling = 2;
  CtSimulateFlags ct;
};

// Flags that belong to one modality: their presence with the other one is an error.
void refuse_other_modality_flags(const CLI::App& sub, Modality modality) {
  for (const CLI::Option* opt : sub.get_options()) {
    if (opt->count() == 0) continue;
    const std::string& g = opt->get_group();
    const bool is_mri = g == kMriGroup, is_ct = g.rfind("CT", 0) == 0, is_inpaint = g == kImageGroup;
    if ((modality != Modality::kMri && is_mri) || (modality != Modality::kCt && is_ct) ||
        (modality != Modality::kInpaint && is_inpaint) || (modality == Modality::kCt && g == kNoiseGroup))
      throw InputError("", opt->get_name(), "does not apply to --modality " + std::string(to_string(modality)));
  }
}

// Library field paths of MRI simulation and their flags.
const std::vector<FieldFlag>& mri_simulate_flags() {
  static const std::vector<FieldFlag> map = {
      {"mri.coils", "--coils"},
      {"mri.noise_sigma", "--noise"},
      {"mri.snr_db", "--snr-db"},
      {"mri.coil_correlation", "--coil-correlation"},
      {"mri.oversampling", "--oversampling"},
      {"mri.", "--coils"},
      {"mask", "--mask"},
      {"trajectory", "--trajectory"},
      {"truth", "--truth"},
      {"raster", "--phantom"},
  };
  return map;
}

// Library field paths of the image problems and their flags.
const std::vector<FieldFlag>& image_simulate_flags() {
  static const std::vector<FieldFlag> map = {
      {"denoise.noise_sigma", "--noise"}, {"inpaint.noise_sigma", "--noise"},   {"inpaint.keep", "--keep"},
      {"inpaint.block_size", "--block-size"}, {"inpaint.pixel_mask", "--pixel-mask"},
  };
  return map;
}

// denoise / inpaint: the measurement of the raster (checked before any work).
Measurement simulate_image_cli(const SimulateFlags& f, const CLI::App& sub, Modality modality, const ImageC& raster,
                               double spacing, Provenance& prov) {
  ImageProblemOptions o;
  o.noise_sigma = f.noise;
  o.keep = f.keep;
  o.block_size = f.block_size;
  o.seed = f.seed;
  if (!f.pixel_mask.empty()) {
    if (sub.get_option("--pattern")->count() > 0)
      throw InputError("", "--pattern", "give either --pattern or --pixel-mask, not both");
    if (sub.get_option("--keep")->count() > 0)
      throw InputError("", "--keep", "the kept pixels of --pixel-mask are given; do not give --keep");
    if (!file_exists(f.pixel_mask)) throw InputError(f.pixel_mask, "--pixel-mask", not_a_file_reason(f.pixel_mask));
    const SamplingMask pm = read_mask_file(f.pixel_mask, "--pixel-mask");
    const Shape image_shape{raster.rows(), raster.cols()};
    if (pm.mask.shape != image_shape)
      throw InputError(f.pixel_mask, "--pixel-mask",
                       "mask shape " + pm.mask.shape.to_string() + " differs from the image shape " +
                           image_shape.to_string() + " of " + f.phantom);
    o.pattern = PixelPattern::kFile;
    o.pixel_mask = pm.mask;
    prov.extra["pixel_mask_file"] = f.pixel_mask;
    prov.extra["pixel_mask_checksum_fnv1a64"] = file_checksum(f.pixel_mask);
  } else {
    const std::optional<PixelPattern> p = parse_pixel_pattern(f.pattern);
    if (!p) throw InputError("", "--pattern", "'" + f.pattern + "'; expected random or blocks");
    o.pattern = *p;
  }
  try {
    return simulate_image_problem(modality, raster, spacing, o);
  } catch (const InputError& e) {
    throw_with_flags(e, image_simulate_flags());
  }
}

MriSimulationOptions mri_options_from_flags(const SimulateFlags& f, bool analytic_truth) {
  MriSimulationOptions o;
  o.coil_array.coils = f.coils;
  o.truth = analytic_truth ? MriTruth::kAnalytic : MriTruth::kDiscrete;
  o.oversampling = f.oversampling;
  o.noise_sigma = f.noise;
  o.snr_db = f.snr_db;
  o.coil_correlation = f.coil_correlation;
  o.seed = f.seed;
  return o;
}

// MRI on the Cartesian grid (--mask, or fully sampled).
Measurement simulate_mri_cartesian_cli(const SimulateFlags& f, const Phantom* analytic, const ImageC& raster,
                                       const double spacing[2], bool analytic_truth, Provenance& prov,
                                       std::string& summary) {
  const Index ny = raster.rows(), nx = raster.cols();
  SamplingMask mask;
  std::string mask_note;
  if (f.mask.empty()) {
    mask.mask = NdArray<uint8_t>(Shape{ny, nx}, 1);
    mask.pattern = "full";
    mask.samples = ny * nx;
    mask.achieved_acceleration = 1.0;
  } else {
    // A mask file of the image's shape, or a sampling spec .toml drawn on the image grid.
    mask = mask_for_grid(f.mask, ny, nx, prov, mask_note);
    if (mask.achieved_acceleration > 64.0)
      throw InputError(f.mask, "--mask",
                       "acceleration R = " + std::to_string(mask.achieved_acceleration) + " is above 64");
  }
  Measurement m;
  try {
    m = simulate_mri(analytic, raster, spacing[0], mask, mri_options_from_flags(f, analytic_truth));
  } catch (const InputError& e) {
    throw_with_flags(e, mri_simulate_flags());
  }
  m.pixel_spacing_mm[0] = spacing[0];
  m.pixel_spacing_mm[1] = spacing[1];
  char buf[256];
  std::snprintf(buf, sizeof buf, "MRI k-space [%d, %lld, %lld], %s, R %.3f, noise sigma %.4g", f.coils,
                static_cast<long long>(ny), static_cast<long long>(nx), mask.pattern.c_str(),
                mask.achieved_acceleration, m.mri->noise_sigma);
  summary = buf;
  if (!mask_note.empty()) summary += " (" + mask_note + ")";
  return m;
}

// MRI at the points of --trajectory (non-Cartesian: kspace [coils, M]).
Measurement simulate_mri_trajectory_cli(const SimulateFlags& f, const Phantom* analytic, const ImageC& raster,
                                        const double spacing[2], bool analytic_truth, Provenance& prov,
                                        std::string& summary) {
  const Index ny = raster.rows(), nx = raster.cols();
  const Trajectory t = load_trajectory(f.trajectory, "--trajectory", ny, nx);
  prov.extra["trajectory_file"] = f.trajectory;
  prov.extra["trajectory_checksum_fnv1a64"] = file_checksum(f.trajectory);
  Measurement m;
  try {
    m = simulate_mri_trajectory_measurement(analytic, raster, spacing[0], t, mri_options_from_flags(f, analytic_truth));
  } catch (const InputError& e) {
    throw_with_flags(e, mri_simulate_flags());
  }
  m.pixel_spacing_mm[0] = spacing[0];
  m.pixel_spacing_mm[1] = spacing[1];
  char buf[320];
  std::snprintf(buf, sizeof buf,
                "MRI k-space [%d, %lld] at %s trajectory points (%lld readouts x %lld), Cartesian-equivalent R %.3f, "
                "noise sigma %.4g",
                f.coils, static_cast<long long>(t.points()), std::string(to_string(t.kind)).c_str(),
                static_cast<long long>(t.readouts), static_cast<long long>(t.samples_per_readout),
                m.mri->acceleration, m.mri->noise_sigma);
  summary = buf;
  return m;
}

// "denoise image [64, 64], all, kept 1.000, noise sigma 0.1".
std::string image_problem_summary(const std::string& modality, const Measurement& m) {
  char buf[256];
  std::snprintf(buf, sizeof buf, "%s image [%lld, %lld], %s, kept %.3f, noise sigma %.4g", modality.c_str(),
                static_cast<long long>(m.ny), static_cast<long long>(m.nx), m.image->pattern.c_str(),
                m.image->kept_fraction, m.image->noise_sigma);
  return buf;
}

// "CT sinogram [60, 91], parallel beam, 60 views over 180 deg, 91 detectors x 1 mm, 1e+05 photons/ray".
std::string ct_summary(const CtData& ct) {
  const auto& a = ct.angles_rad;
  const double arc_deg = a.size() > 1 ? (a.back() - a.front()) * 180.0 / 3.14159265358979323846 *
                                            double(a.size()) / double(a.size() - 1)
                                      : 0.0;
  std::string s = "CT sinogram " + ct.sinogram.shape.to_string() + ", " + std::string(to_string(ct.beam)) + " beam";
  if (ct.beam == CtBeam::kFan)
    s += " (" + std::string(to_string(ct.detector_shape)) + " detector, source " +
         format_sig(ct.source_to_isocenter_mm, 4) + " mm, detector " + format_sig(ct.source_to_detector_mm, 4) + " mm)";
  s += ", " + std::to_string(a.size()) + " views over " + format_sig(arc_deg, 4) + " deg, " +
       std::to_string(ct.detector_count) + " detectors x " + format_sig(ct.detector_spacing_mm, 4) + " mm, " +
       (ct.photons_per_ray > 0 ? format_sig(ct.photons_per_ray, 3) + " photons/ray" : std::string("noiseless"));
  return s;
}

// The flags of a simulation from --phantom that must fit each other, checked before any work.
void check_phantom_flags(const SimulateFlags& f, const CLI::App& sub, Modality modality, bool image_problem) {
  refuse_other_modality_flags(sub, modality);
  if (!f.trajectory.empty()) {
    if (!f.mask.empty())
      throw InputError("", "--trajectory", "give either --mask (Cartesian) or --trajectory (non-Cartesian), not both");
    if (sub.get_option("--oversampling")->count() > 0)
      throw InputError("", "--oversampling",
                       "does not apply with --trajectory (its exact simulation evaluates the closed form at the "
                       "points; there is no raster)");
    if (!file_exists(f.trajectory)) throw InputError(f.trajectory, "--trajectory", not_a_file_reason(f.trajectory));
  }
  if (!f.truth.empty() && f.truth != "analytic" && f.truth != "discrete")
    throw InputError("", "--truth", "'" + f.truth + "'; expected analytic or discrete");
  if (image_problem && f.truth == "analytic")
    throw InputError("", "--truth", "analytic does not apply to --modality " + f.modality +
                                        ": the observed image is the object's pixels (its truth is discrete)");
  if (f.index < 0) throw InputError("", "--index", "must be >= 0");
}

void run_simulate(SimulateFlags& f, const CLI::App& sub, const Context& ctx) {
  if (!f.from.empty()) {
    run_simulate_from(SimulateFromFlags{f.from, f.mask, f.out, f.noise, f.seed}, sub, ctx);
    return;
  }
  // Every check before any work: bad input leaves no output.
  if (f.phantom.empty()) throw InputError("", "--phantom", "is required (or --from MEAS.h5 to undersample measured data)");
  if (f.modality.empty()) throw InputError("", "--modality", "is required with --phantom (mri, ct, denoise or inpaint)");
  require_output_path(f.out, "--out", {".h5"});
  require_distinct_output(f.out, "--out", {f.phantom, f.mask, f.trajectory});
  const std::optional<Modality> modality = parse_modality(f.modality);
  if (!modality) throw InputError("", "--modality", "'" + f.modality + "'; expected " + accepted_modalities());
  const bool image_problem = *modality == Modality::kDenoise || *modality == Modality::kInpaint;
  check_phantom_flags(f, sub, *modality, image_problem);
  if (!file_exists(f.phantom)) throw InputError(f.phantom, "--phantom", not_a_file_reason(f.phantom));

  const ImageRecord rec = read_image_any(f.phantom);
  const Shape& s = rec.pixels.shape;
  const Index count = s.rank() == 3 ? s[0] : 1;
  if (f.index >= count)
    throw InputError(f.phantom, "--index", std::to_string(f.index) + " is out of range; the file holds " +
                                               std::to_string(count) + " object" + (count == 1 ? "" : "s"));
  const Index ny = s[s.rank() - 2], nx = s[s.rank() - 1], n = ny * nx;
  ImageC raster(ny, nx);
  std::copy(rec.pixels.data.begin() + f.index * n, rec.pixels.data.begin() + (f.index + 1) * n, raster.data());
  std::unique_ptr<Phantom> analytic;
  const auto table = rec.tables.find(kPhantomTablePath);
  if (table != rec.tables.end()) analytic = std::make_unique<Phantom>(phantom_from_table(table->second, f.phantom, f.index));
  bool analytic_truth = !image_problem && (f.truth.empty() ? analytic != nullptr : f.truth == "analytic");
  if (analytic_truth && !analytic)
    throw InputError(f.phantom, "--truth",
                     "analytic needs a phantom file with a component table (/phantom/components); this file has "
                     "pixels only: use --truth discrete");
  const double spacing = rec.pixel_spacing_mm[0];

  Provenance prov = make_provenance(ctx);
  prov.extra["phantom_file"] = f.phantom;
  prov.extra["phantom_checksum_fnv1a64"] = file_checksum(f.phantom);
  prov.extra["phantom_index"] = std::to_string(f.index);
  prov.extra["seed"] = std::to_string(f.seed);
  prov.extra["truth"] = analytic_truth ? "analytic" : "discrete (from the pixels)";

  apply_threads(ctx);
  // A few one-off transforms: instant, deterministic FFTW_ESTIMATE plans (same bytes every run).
  set_fft_measure(false);
  Measurement m;
  std::string summary;
  if (image_problem) {
    m = simulate_image_cli(f, sub, *modality, raster, spacing, prov);
    m.pixel_spacing_mm[0] = rec.pixel_spacing_mm[0];
    m.pixel_spacing_mm[1] = rec.pixel_spacing_mm[1];
    summary = image_problem_summary(f.modality, m);
  } else if (*modality == Modality::kCt) {
    NdArray<cfloat> pix(Shape{ny, nx});
    std::copy(raster.data(), raster.data() + n, pix.data.begin());
    m = simulate_ct_measurement(f.ct, analytic.get(), pix, spacing, analytic_truth, f.seed);
    summary = ct_summary(*m.ct);
  } else if (!f.trajectory.empty()) {
    m = simulate_mri_trajectory_cli(f, analytic.get(), raster, rec.pixel_spacing_mm, analytic_truth, prov, summary);
  } else {
    m = simulate_mri_cartesian_cli(f, analytic.get(), raster, rec.pixel_spacing_mm, analytic_truth, prov, summary);
  }
  m.provenance = prov;
  write_measurement_file(f.out, m);
  say(ctx, "wrote " + f.out + ": " + summary + ", truth " + m.truth_kind);
}

}  // namespace

void register_cmd_simulate(CLI::App& app, Context& ctx) {
  auto f = std::make_shared<SimulateFlags>();
  CLI::App* sub = app.add_subcommand(
      "simulate",
      "Simulate an MRI, CT, denoising or inpainting measurement of a phantom, or undersample measured k-space (--from)");
  sub->add_option("--phantom", f->phantom, "Object: a phantom file from `recofold phantom`, or any image file");
  sub->add_option("--from", f->from,
                  "Instead of --phantom: a fully sampled MRI measurement (e.g. from `recofold import`) to undersample "
                  "with --mask (.h5, image or sampling spec .toml, drawn on the data grid); --noise adds noise; the "
                  "truth is the fully sampled coil-combined image (truth kind 'fully sampled')");
  sub->add_option("--index", f->index, "Object I of a phantom file holding a stack (default 0)");
  sub->add_option("--modality", f->modality,
                  "mri | ct | denoise (y = x + n) | inpaint (y = M x + n) (required with --phantom)");
  sub->add_option("--truth", f->truth,
                  "analytic (exact transform/line integrals of the component table; the default when the file has "
                  "one) | discrete (from the pixels: the 'inverse crime'; the default for pixel-only objects)");
  sub->add_option("--seed", f->seed, "Seed of the noise (default 0)");
  sub->add_option("--out", f->out, "Measurement file (.h5)")->required();
  sub->add_option("--mask", f->mask, "MRI: sampling mask (.h5 from `recofold mask`, .png, or a sampling spec .toml such as sampling-masks/lines-4x-256.toml, drawn on the image grid); default "
                  "fully sampled")
      ->group(kMriGroup);
  sub->add_option("--coils", f->coils, "MRI: receive coils around the field of view, 1..32 (default 1)")->group(kMriGroup);
  sub->add_option("--noise", f->noise,
                  "MRI: noise std of the real and of the imaginary part of each k-space sample (default 0); "
                  "equals the image-domain std (orthonormal FFT). denoise, inpaint: Gaussian noise std per "
                  "observed pixel, in the object's intensity units (default 0)")
      ->group(kNoiseGroup);
  sub->add_option("--keep", f->keep, "inpaint: fraction of pixels kept, in (0, 1] (default 0.5)")->group(kImageGroup);
  sub->add_option("--pattern", f->pattern,
                  "inpaint: random (each pixel kept with probability --keep) | blocks (random square blocks "
                  "removed; default random)")
      ->group(kImageGroup);
  sub->add_option("--block-size", f->block_size, "inpaint --pattern blocks: block side in pixels (default 8)")
      ->group(kImageGroup);
  sub->add_option("--pixel-mask", f->pixel_mask,
                  "inpaint: the kept pixels from a mask file (.h5 from `recofold mask`, or .png; 1 = kept) "
                  "instead of --pattern")
      ->group(kImageGroup);
  sub->add_option("--snr-db", f->snr_db,
                  "MRI: noise from an SNR instead: 10 log10(mean |clean sample|^2 / (2 sigma^2))")
      ->group(kMriGroup);
  sub->add_option("--coil-correlation", f->coil_correlation,
                  "MRI: noise correlation of neighbouring coils, rho in [0, 1) (rho^d at ring distance d)")
      ->group(kMriGroup);
  sub->add_option("--oversampling", f->oversampling,
                  "MRI multi-coil analytic: raster object x coil map this many times finer, 2..8 (default 2)")
      ->group(kMriGroup);
  sub->add_option("--trajectory", f->trajectory,
                  "MRI: sample at the points of a non-Cartesian trajectory (.h5 from `recofold trajectory`, or "
                  ".txt/.csv lines 'kx ky [dcf]' in cycles per FOV) instead of a Cartesian --mask; exact by default "
                  "(closed form of object x coil series at each point), --truth discrete: NUFFT of the raster")
      ->group(kMriGroup);
  add_ct_simulate_flags(*sub, f->ct);
  sub->footer(std::string(kResearchUseLine));
  sub->callback([f, sub, &ctx] { run_simulate(*f, *sub, ctx); });
}

}  // namespace recofold::cli
