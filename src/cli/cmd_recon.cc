// SPDX-License-Identifier: Apache-2.0
// `recofold recon`: flags -> ReconSpec -> reconstruct() -> image file.
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "cli_common.h"
#include "learn_cli.h"
#include "output_checks_cli.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/io/image_export.h"
#include "recofold/io/measurement_file.h"
#include "recofold/ops/fft.h"
#include "recofold/recon/learned_backend.h"
#include "recofold/recon/reconstruct.h"

namespace recofold::cli {

namespace {

// Every flag of `recon` as text; a flag counts as given when CLI11 saw it.
struct ReconFlags {
  std::string meas, method, out, png;
  std::string prior, lambda, lambda_rule, lambda_solves, iters, tol;
  std::string wavelet, levels;
  bool cycle_spin = true;
  bool restart = true;
  std::string rho, cg_iters, tau, sigma;
  std::string filter, combine, maps;
  std::string espirit_kernel, espirit_calib, espirit_threshold, espirit_crop;
  bool nonneg = false, no_nonneg = false;
  std::string model;
};

const char* const kLambdaHelp =
    "Prior weight lambda >= 0; auto (default with a prior); or a list L1,L2,... chosen by the oracle rule "
    "(the value whose image is closest to the file's truth; labelled as such). auto, MRI: discrepancy principle "
    "||Ax-y||^2 = 2 m sigma^2 with the file's noise sigma and m = sampled points x coils, by a geometric lambda "
    "sweep with warm starts. auto, CT: held-out views (the projector's model error with exact line integrals "
    "exceeds the noise energy, so a discrepancy target is unreachable): every 6th view is held out, the same "
    "solver runs on the others on a x2 lambda grid with warm starts, and the largest lambda whose held-out misfit "
    "is within one standard error of the smallest (one-standard-error rule; interpolated in log lambda) is scaled "
    "by all/training views and used on all views (needs >= 12 views). "
    "The rule and its numbers are stored in the output (lambda_rule, /recon/lambda_curve; `recofold info`)";

// Spec field paths (recon/recon_spec.h) and the flags that set them.
const std::vector<FieldFlag>& recon_flags() {
  static const std::vector<FieldFlag> map = {
      {"method", "--method"},
      {"prior", "--prior"},
      {"prior.wavelet.family", "--wavelet"},
      {"prior.wavelet.levels", "--levels"},
      {"prior.wavelet.cycle_spin", "--cycle-spin"},
      {"lambda", "--lambda"},
      {"lambda[", "--lambda"},
      {"lambda.rule", "--lambda-rule"},
      {"lambda.max_solves", "--lambda-solves"},
      {"iterations", "--iters"},
      {"tolerance", "--tol"},
      {"fista.restart", "--restart"},
      {"admm.rho", "--rho"},
      {"admm.cg_iterations", "--cg-iters"},
      {"pdhg.tau", "--tau"},
      {"pdhg.sigma", "--sigma"},
      {"fbp.filter", "--filter"},
      {"zero_filled.combine", "--combine"},
      {"maps", "--maps"},
      {"espirit.kernel_size", "--espirit-kernel"},
      {"espirit.calibration_size", "--espirit-calib"},
      {"espirit.singular_threshold", "--espirit-threshold"},
      {"espirit.crop_threshold", "--espirit-crop"},
      {"nonneg", "--nonneg"},
      {"model", "--model"},
      {"modality", "--meas"},
  };
  return map;
}

class FlagErrors {
 public:
  void add(const std::string& flag, const std::string& value, const std::string& rule) {
    errors_.push_back({flag, value, rule});
  }
  void throw_if_any() const { throw_if_invalid(errors_); }

 private:
  std::vector<FieldError> errors_;
};

bool given(const CLI::App& sub, const char* flag) { return sub.get_option(flag)->count() > 0; }

std::optional<double> number(const std::string& text) {
  char* end = nullptr;
  const double v = std::strtod(text.c_str(), &end);
  if (text.empty() || end != text.c_str() + text.size()) return std::nullopt;
  return v;
}

std::optional<int> integer(const std::string& text) {
  const auto v = number(text);
  if (!v || *v != std::floor(*v) || std::abs(*v) > 1e9) return std::nullopt;
  return static_cast<int>(*v);
}

// The spec the flags describe (only what was given; reconstruct() fills in the defaults).
ReconSpec spec_from_flags(const ReconFlags& f, const CLI::App& sub) {
  FlagErrors errors;
  ReconSpec s;
  if (const auto m = parse_method(f.method)) s.method = *m;
  else errors.add("--method", "'" + f.method + "'", "expected one of " + accepted_methods());
  if (given(sub, "--prior")) {
    if (const auto k = parse_prior(f.prior)) s.prior.kind = *k;
    else errors.add("--prior", "'" + f.prior + "'", "expected one of " + accepted_priors());
  }
  if (given(sub, "--lambda")) {
    if (f.lambda == "auto") {
      s.lambda.mode = LambdaMode::kAuto;
    } else if (f.lambda.find(',') != std::string::npos) {
      s.lambda.mode = LambdaMode::kGrid;
      size_t start = 0;
      while (start <= f.lambda.size()) {
        const size_t comma = std::min(f.lambda.find(',', start), f.lambda.size());
        const std::string item = f.lambda.substr(start, comma - start);
        if (const auto v = number(item)) s.lambda.grid.push_back(*v);
        else errors.add("--lambda", "'" + f.lambda + "'", "expected numbers separated by commas, e.g. 1e-3,1e-2");
        start = comma + 1;
      }
    } else if (const auto v = number(f.lambda)) {
      s.lambda.mode = LambdaMode::kValue;
      s.lambda.value = *v;
    } else {
      errors.add("--lambda", "'" + f.lambda + "'", "expected a number >= 0, auto, or a list L1,L2,...");
    }
  }
  if (given(sub, "--lambda-rule")) {
    if (const auto r = parse_lambda_rule(f.lambda_rule)) s.lambda.rule = *r;
    else errors.add("--lambda-rule", "'" + f.lambda_rule + "'", "expected one of " + accepted_lambda_rules());
  }
  auto int_flag = [&](const char* flag, const std::string& text, std::optional<int>& into) {
    if (!given(sub, flag)) return;
    if (const auto v = integer(text)) into = *v;
    else errors.add(flag, "'" + text + "'", "expected an integer");
  };
  auto num_flag = [&](const char* flag, const std::string& text, std::optional<double>& into) {
    if (!given(sub, flag)) return;
    if (const auto v = number(text)) into = *v;
    else errors.add(flag, "'" + text + "'", "expected a number");
  };
  int_flag("--lambda-solves", f.lambda_solves, s.lambda.max_solves);
  int_flag("--iters", f.iters, s.iterations);
  num_flag("--tol", f.tol, s.tolerance);
  if (given(sub, "--wavelet")) {
    if (const auto w = parse_wavelet(f.wavelet)) s.prior.wavelet.family = *w;
    else errors.add("--wavelet", "'" + f.wavelet + "'", "expected one of " + accepted_wavelets());
  }
  int_flag("--levels", f.levels, s.prior.wavelet.levels);
  if (given(sub, "--cycle-spin")) s.prior.wavelet.cycle_spin = f.cycle_spin;
  if (given(sub, "--restart")) s.fista.restart = f.restart;
  num_flag("--rho", f.rho, s.admm.rho);
  int_flag("--cg-iters", f.cg_iters, s.admm.cg_iterations);
  num_flag("--tau", f.tau, s.pdhg.tau);
  num_flag("--sigma", f.sigma, s.pdhg.sigma);
  if (given(sub, "--filter")) {
    if (const auto x = parse_fbp_filter(f.filter)) s.fbp.filter = *x;
    else errors.add("--filter", "'" + f.filter + "'", "expected one of " + fbp_filter_names());
  }
  if (given(sub, "--combine")) {
    if (const auto c = parse_coil_combine(f.combine)) s.zero_filled.combine = *c;
    else errors.add("--combine", "'" + f.combine + "'", "expected sos or sense");
  }
  if (given(sub, "--maps")) {
    if (const auto c = parse_coil_map_source(f.maps)) s.maps = *c;
    else errors.add("--maps", "'" + f.maps + "'", "expected one of " + coil_map_source_names());
  }
  int_flag("--espirit-kernel", f.espirit_kernel, s.espirit.kernel_size);
  int_flag("--espirit-calib", f.espirit_calib, s.espirit.calibration_size);
  num_flag("--espirit-threshold", f.espirit_threshold, s.espirit.singular_threshold);
  num_flag("--espirit-crop", f.espirit_crop, s.espirit.crop_threshold);
  if (f.nonneg && f.no_nonneg) errors.add("--nonneg", "", "conflicts with --no-nonneg");
  if (f.nonneg) s.nonneg = true;
  if (f.no_nonneg) s.nonneg = false;
  s.model = f.model;
  errors.throw_if_any();
  return s;
}

const std::vector<std::string> kImageExtensions = {".h5", ".nii.gz", ".nii", ".mha", ".nrrd", ".png"};

void run_recon(const ReconFlags& f, const CLI::App& sub, const Context& ctx) {
  require_output_path(f.out, "--out", kImageExtensions);
  if (!f.png.empty()) require_output_path(f.png, "--png", {".png"});
  require_distinct_output(f.out, "--out", {f.meas});
  require_distinct_output(f.png, "--png", {f.meas, f.out});
  const ReconSpec spec = spec_from_flags(f, sub);
  if (!file_exists(f.meas)) throw InputError(f.meas, "--meas", not_a_file_reason(f.meas));
  const Measurement m = read_measurement_file(f.meas);
  // Every check before any work: the whole spec against this measurement.
  try {
    throw_if_invalid(spec.validate(m.modality, Shape{m.ny, m.nx}), f.meas);
  } catch (const InputError& e) {
    throw_with_flags(e, recon_flags(), f.meas);
  }
  const bool flow_prior = spec.prior.kind && *spec.prior.kind == PriorKind::kFlow;
  if (spec.method == Method::kUnrolled || flow_prior) {
    install_learned_backend();
    const LearnedBackendLookup found = find_learned_backend();
    if (!found.backend) throw InputError("", flow_prior ? "--prior flow" : "--method unrolled", found.reason);
  }
  apply_threads(ctx);
  // Direct methods are a few one-off transforms: instant, deterministic
  // FFTW_ESTIMATE plans (same bytes every run). Iterative methods keep the
  // global planning choice (--fft-plan).
  if (!is_iterative(spec.method)) set_fft_measure(false);
  auto iteration_progress = make_progress(ctx, f.method);
  auto lambda_progress = make_progress(ctx, "lambda");
  ReconHooks hooks;
  hooks.iterations = iteration_progress.get();
  hooks.lambda = lambda_progress.get();
  hooks.file = f.meas;
  Reconstruction r;
  try {
    r = reconstruct(m, spec, hooks);
  } catch (const InputError& e) {
    throw_with_flags(e, recon_flags(), f.meas);
  }
  if (is_iterative(spec.method)) {
    iteration_progress->finish(r.summary.brief_report());
    if (r.lambda.curve) lambda_progress->finish("lambda " + format_number(r.lambda.value));
    say(ctx, r.summary.brief_report());
    say(ctx, "lambda " + (std::isnan(r.lambda.value) ? std::string("none") : format_number(r.lambda.value)) + ": " +
                 r.lambda.rule);
  }
  if (!r.outside_training.empty())
    std::cerr << "warning: measurement outside the training conditions of " << spec.model << ": "
              << r.outside_training << "\n";
  ImageRecord rec = reconstruction_record(m, r);
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
  sub->add_option("--method", f->method, "Method: " + accepted_methods())->required();
  sub->add_option("--out", f->out, "Image file (.h5, .nii.gz, .nii, .mha, .nrrd, .png)")->required();
  sub->add_option("--png", f->png, "Also a PNG quick look (magnitude, auto window)");
  const std::string g = "Iterative (--method cg|ista|fista|admm|pdhg)";
  sub->add_option("--prior", f->prior,
                  "Prior: " + accepted_priors() +
                      " (default: fista/ista wavelet for MRI and tv otherwise; admm/pdhg tv; cg none, l2 = Tikhonov; "
                      "flow = -log p of a flow model given by --model, ista/fista only)")
      ->group(g);
  sub->add_option("--lambda", f->lambda, kLambdaHelp)->group(g);
  sub->add_option("--lambda-rule", f->lambda_rule,
                  "Rule of --lambda auto or a list: " + accepted_lambda_rules() +
                      " (default: auto discrepancy, CT held-out-views; a list oracle)")
      ->group(g);
  sub->add_option("--lambda-solves", f->lambda_solves, "Most solves of the auto rule's sweep, >= 2 (default 16, CT 12)")
      ->group(g);
  sub->add_option("--iters", f->iters,
                  "Iterations per solve, >= 1 (default: cg 12, ista 100, fista 60, admm 30, pdhg 150)")
      ->group(g);
  sub->add_option("--tol", f->tol,
                  "Stop when ||x_k - x_{k-1}|| / ||x_k|| is below this, >= 0; 0 runs every iteration (default: cg "
                  "and ista 1e-6, fista 0, admm and pdhg 1e-4)")
      ->group(g);
  sub->add_option("--wavelet", f->wavelet, "Wavelet of --prior wavelet: " + accepted_wavelets() + " (default db4)")
      ->group(g);
  sub->add_option("--levels", f->levels, "Wavelet levels; image sides divisible by 2^levels (default 3)")->group(g);
  sub->add_flag("--cycle-spin,!--no-cycle-spin", f->cycle_spin,
                "Random cycle spinning of the wavelet prior per iteration (default on)")
      ->group(g);
  sub->add_flag("--restart,!--no-restart", f->restart, "FISTA adaptive restart (default on)")->group(g);
  sub->add_option("--rho", f->rho, "ADMM penalty rho > 0 (default 0: 10 lambda, then residual balancing)")->group(g);
  sub->add_option("--cg-iters", f->cg_iters, "ADMM inner CG steps per x-update, >= 1 (default 4)")->group(g);
  sub->add_option("--tau", f->tau, "PDHG primal step (with --sigma; default: automatic steps)")->group(g);
  sub->add_option("--sigma", f->sigma, "PDHG dual step (with --tau)")->group(g);
  sub->add_flag("--nonneg", f->nonneg, "Non-negativity constraint (real, >= 0; default on for CT with a prior)")
      ->group(g);
  sub->add_flag("--no-nonneg", f->no_nonneg, "CT: switch the default non-negativity off")->group(g);
  sub->add_option("--filter", f->filter, "FBP window: " + fbp_filter_names() + " (default ram-lak)")
      ->group("CT (--method fbp)");
  const std::string z = "MRI (--method zero-filled)";
  sub->add_option("--combine", f->combine,
                  "MRI coil combination: sense (default; sensitivity-weighted, sum conj(S) x / sum |S|^2) | sos "
                  "(root sum of squares, magnitude)")
      ->group(z);
  sub->add_option("--maps", f->maps,
                  "MRI coil maps of every method (zero-filled: with --combine sense): measured (default; the "
                  "file's maps) | estimated or lowres (low-resolution estimate from the fully sampled centre) | "
                  "espirit (ESPIRiT from the calibration data: the fully sampled centre, or the gridded centre of "
                  "a trajectory)")
      ->group("MRI");
  const std::string e = "ESPIRiT (--maps espirit)";
  sub->add_option("--espirit-kernel", f->espirit_kernel, "Kernel (window) size in k-space samples per axis, 2..16 "
                                                          "(default 6)")
      ->group(e);
  sub->add_option("--espirit-calib", f->espirit_calib,
                  "Calibration block: at most this many central samples per axis, kernel..256 (default 24)")
      ->group(e);
  sub->add_option("--espirit-threshold", f->espirit_threshold,
                  "Keep singular vectors above this fraction of the largest, in (0, 1) (default 0.02)")
      ->group(e);
  sub->add_option("--espirit-crop", f->espirit_crop,
                  "Maps are zero where the largest eigenvalue is below this, in [0, 1) (default 0.9)")
      ->group(e);
  sub->add_option("--model", f->model,
                  "Model file of --method unrolled, or the flow of --prior flow (both from `recofold train`)")
      ->group("Learned (--method unrolled, --prior flow)");
  sub->footer("Unset flags take the method's defaults (DEVELOPERS.md: where defaults live); a flag that does not "
              "apply to the method is refused.\n" +
              std::string(kResearchUseLine));
  sub->callback([f, sub, &ctx] { run_recon(*f, *sub, ctx); });
}

}  // namespace recofold::cli
