// SPDX-License-Identifier: Apache-2.0
// `recofold recon`: reconstruct an image from a measurement file with one of the available methods.
#include <cmath>
#include <cstdio>
#include <memory>
#include <string>
#include <vector>

#include "cli_common.h"
#include "output_checks_cli.h"
#include "ct_cli.h"
#include "recon_solve_cli.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/io/image_export.h"
#include "recofold/ops/fft.h"
#include "recofold/io/measurement_file.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/recon/zero_filled.h"

namespace recofold::cli {

namespace {

const char* kMriGroup = "MRI (--method zero-filled)";

// The methods this build offers, with the modality each needs.
struct MethodInfo {
  const char* name;
  const char* modality;
};
// "any": the method runs on both modalities (the operator comes from the file).
const std::vector<MethodInfo> kMethods = {{"zero-filled", "mri"}, {"fbp", "ct"}, {"cg", "any"},
                                          {"ista", "any"},        {"fista", "any"}, {"admm", "any"},
                                          {"pdhg", "any"},        {"unrolled", "any"}};

std::string method_list() {
  std::string s;
  for (const auto& m : kMethods) s += (s.empty() ? "" : ", ") + std::string(m.name);
  return s;
}

struct ReconFlags {
  std::string meas, method, out, png;
  std::string combine = "sos";
  std::string maps = "measured";
  CtReconFlags ct;
  SolveFlags solve;
};

const std::vector<std::string> kImageExtensions = {".h5", ".nii.gz", ".nii", ".mha", ".nrrd", ".png"};

ImageRecord zero_filled_record(const Measurement& m, const ReconFlags& f, const CLI::App& sub) {
  const auto combine = parse_coil_combine(f.combine);
  if (!combine) throw InputError("", "--combine", "'" + f.combine + "'; expected sos or sense");
  if (f.maps != "measured" && f.maps != "estimated")
    throw InputError("", "--maps", "'" + f.maps + "'; expected measured or estimated");
  if (sub.count("--maps") > 0 && *combine != CoilCombine::kSensitivity)
    throw InputError("", "--maps", "only applies with --combine sense");
  // A few one-off transforms: instant, deterministic FFTW_ESTIMATE plans
  // (same bytes every run). Iterative methods keep FFTW_MEASURE.
  set_fft_measure(false);
  MriData mri = *m.mri;
  if (f.maps == "estimated") {
    mri.coil_maps = estimate_coil_maps(mri.kspace, mri.mask, 0.05, f.meas);
    mri.coil_maps_source = "estimated";
  }
  const ImageC img = zero_filled(mri, *combine, f.meas);
  ImageRecord rec;
  const Index ny = img.rows(), nx = img.cols();
  rec.pixels = NdArray<cfloat>(Shape{ny, nx});
  // Sensitivity-weighted images are complex; a real object is written as the
  // real part (its phase is known to be zero, and the magnitude would bias the noise).
  const bool keep_complex = *combine == CoilCombine::kSensitivity && (m.truth_is_complex || !m.truth);
  for (Index i = 0; i < ny * nx; ++i)
    rec.pixels.data[static_cast<size_t>(i)] = keep_complex ? img.data()[i] : cfloat(img.data()[i].real(), 0.0f);
  rec.is_complex = keep_complex;
  rec.pixel_spacing_mm[0] = m.pixel_spacing_mm[0];
  rec.pixel_spacing_mm[1] = m.pixel_spacing_mm[1];
  char buf[200];
  std::snprintf(buf, sizeof buf, "zero-filled reconstruction, %s coil combination%s, %lld coils, R %.3f",
                std::string(to_string(*combine)).c_str(),
                *combine == CoilCombine::kSensitivity ? (" (" + mri.coil_maps_source + " maps)").c_str() : "",
                static_cast<long long>(mri.kspace.shape[0]), mri.acceleration);
  rec.description = buf;
  rec.text_attrs["method"] = "zero-filled";
  rec.text_attrs["combine"] = std::string(to_string(*combine));
  if (*combine == CoilCombine::kSensitivity) rec.text_attrs["coil_maps"] = mri.coil_maps_source;
  return rec;
}

void run_recon(const ReconFlags& f, const CLI::App& sub, const Context& ctx) {
  require_output_path(f.out, "--out", kImageExtensions);
  if (!f.png.empty()) require_output_path(f.png, "--png", {".png"});
  require_distinct_output(f.out, "--out", {f.meas}); require_distinct_output(f.png, "--png", {f.meas, f.out});
  const MethodInfo* method = nullptr;
  for (const auto& m : kMethods)
    if (f.method == m.name) method = &m;
  if (!method) throw InputError("", "--method", "'" + f.method + "' is not available; methods in this build: " + method_list());
  for (const CLI::Option* opt : sub.get_options()) {
    if (opt->count() == 0) continue;
    const std::string& g = opt->get_group();
    if ((g == kMriGroup && std::string(method->name) != "zero-filled") ||
        (g.rfind("CT", 0) == 0 && std::string(method->name) != "fbp") ||
        (g == kSolveGroup && !is_solver_method(f.method)) ||
        (g.rfind("Learned", 0) == 0 && f.method != "unrolled"))
      throw InputError("", opt->get_name(), "does not apply to --method " + f.method);
  }
  if (!file_exists(f.meas)) throw InputError(f.meas, "--meas", not_a_file_reason(f.meas));
  const Measurement m = read_measurement_file(f.meas);
  if (std::string(method->modality) != "any" && to_string(m.modality) != method->modality)
    throw InputError(f.meas, "--method",
                     f.method + " needs a " + method->modality + " measurement; this file is " +
                         std::string(to_string(m.modality)));
  apply_threads(ctx);
  ImageRecord rec;
  try {
    if (is_solver_method(f.method))
      rec = reconstruct_solver_record(m, f.method, f.solve, sub, ctx);
    else if (f.method == "unrolled")
      rec = reconstruct_unrolled_cli(m, f.solve, sub);
    else
      rec = std::string(method->name) == "fbp" ? reconstruct_fbp_record(m, f.ct) : zero_filled_record(m, f, sub);
  } catch (const InputError& e) {
    if (!e.file().empty()) throw;
    throw InputError(f.meas, e.field(), e.reason(), e.line());
  }
  rec.text_attrs["measurement"] = f.meas;
  Provenance prov = make_provenance(ctx);
  prov.extra["measurement_file"] = f.meas;
  prov.extra["measurement_checksum_fnv1a64"] = file_checksum(f.meas);
  prov.extra["method"] = f.method;
  write_image_any(f.out, rec, prov, PngWindow{});
  say(ctx, "wrote " + f.out + ": " + rec.description);
  if (!f.png.empty()) {
    write_png(f.png, image_slice(rec, 0, f.out), PngWindow{});
    say(ctx, "wrote " + f.png);
  }
}

}  // namespace

void register_cmd_recon(CLI::App& app, Context& ctx) {
  auto f = std::make_shared<ReconFlags>();
  CLI::App* sub = app.add_subcommand("recon", "Reconstruct an image from a measurement file");
  sub->add_option("--meas", f->meas, "Measurement file (.h5 from `recofold simulate`)")->required();
  sub->add_option("--method", f->method, "Method: " + method_list())->required();
  sub->add_option("--out", f->out, "Image file (.h5, .nii.gz, .nii, .mha, .nrrd, .png)")->required();
  sub->add_option("--png", f->png, "Also a PNG quick look (magnitude, auto window)");
  sub->add_option("--combine", f->combine,
                  "MRI coil combination: sos (root sum of squares, magnitude) | sense (sensitivity-weighted, "
                  "sum conj(S) x / sum |S|^2)")
      ->capture_default_str()
      ->group(kMriGroup);
  sub->add_option("--maps", f->maps,
                  "MRI with --combine sense: measured (the file's coil maps) | estimated (low-resolution estimate "
                  "from the fully sampled centre)")
      ->capture_default_str()
      ->group(kMriGroup);
  add_ct_recon_flags(*sub, f->ct);
  add_solve_flags(*sub, f->solve);
  sub->footer(std::string(kResearchUseLine));
  sub->callback([f, sub, &ctx] { run_recon(*f, *sub, ctx); });
}

}  // namespace recofold::cli
