// SPDX-License-Identifier: Apache-2.0
// Iterative parts of `recofold recon`: flag checks, per-modality defaults, the call into recon/pipeline, the record.
#include "recon_solve_cli.h"

#include <cmath>
#include <cstdio>
#include <iostream>
#include <sstream>

#include "learn_cli.h"
#include "recofold/core/error.h"
#include "recofold/ops/wavelet.h"
#include "recofold/recon/pipeline.h"

namespace recofold::cli {

const char* const kSolveGroup = "Iterative (--method cg|ista|fista|admm|pdhg)";

namespace {

const char* const kLambdaHelp =
    "Prior weight lambda >= 0, or auto (default with a prior). auto, MRI: discrepancy principle "
    "||Ax-y||^2 = 2 m sigma^2 with the file's noise sigma and m = sampled points x coils, by a geometric lambda "
    "sweep with warm starts. auto, CT: held-out views (the projector's model error with exact line integrals "
    "exceeds the noise energy, so a discrepancy target is unreachable): every 6th view is held out, the same "
    "solver runs on the others on a x2 lambda grid with warm starts, the lambda with the smallest held-out "
    "misfit (log-parabola refined) is scaled by all/training views and used on all views (needs >= 12 views). "
    "The rule and its numbers are stored in the output (lambda_rule, /recon/lambda_curve; `recofold info`)";

std::string num(double v) {
  std::ostringstream s;
  s << v;
  return s.str();
}

bool given(const CLI::App& sub, const char* flag) { return sub.get_option(flag)->count() > 0; }

// The default prior of a method on a modality.
PriorKind default_prior(SolverMethod method, bool mri) {
  switch (method) {
    case SolverMethod::kCg: return PriorKind::kNone;
    case SolverMethod::kIsta:
    case SolverMethod::kFista: return mri ? PriorKind::kWavelet : PriorKind::kTv;
    case SolverMethod::kAdmm:
    case SolverMethod::kPdhg: return PriorKind::kTv;
  }
  return PriorKind::kNone;
}

Table curve_table(const LambdaCurve& c, const std::string& rule, bool mri) {
  Table t = c.table();
  t.text_attrs["rule"] = rule;
  t.text_attrs["score"] = mri ? "none" : "held-out view misfit ||A_h x - y_h||^2 (lower is better)";
  t.text_attrs["residual_squared"] = mri ? "||A x - y||^2" : "training-view misfit ||A_t x - y_t||^2";
  return t;
}

}  // namespace

void add_solve_flags(CLI::App& sub, SolveFlags& f) {
  const std::string g = kSolveGroup;
  sub.add_option("--prior", f.prior,
                 "Prior: " + accepted_priors() +
                     " (default: fista/ista wavelet for MRI and tv for CT; admm/pdhg tv; cg none, l2 = Tikhonov)")
      ->group(g);
  sub.add_option("--lambda", f.lambda, kLambdaHelp)->group(g);
  sub.add_option("--iters", f.iters,
                 "Iterations per solve, >= 1 (default: cg 12, ista 100, fista 60, admm 30 with 4 inner CG steps, "
                 "pdhg 150)")
      ->group(g);
  sub.add_option("--wavelet", f.wavelet, "Wavelet of --prior wavelet: " + accepted_wavelets())
      ->capture_default_str()
      ->group(g);
  sub.add_option("--levels", f.levels, "Wavelet levels (image sides divisible by 2^levels)")
      ->capture_default_str()
      ->group(g);
  sub.add_flag("--cycle-spin,!--no-cycle-spin", f.cycle_spin,
               "Random cycle spinning of the wavelet prior per iteration (default on)")
      ->group(g);
  sub.add_flag("--nonneg", f.nonneg, "Non-negativity constraint (real, >= 0; default on for CT with a prior)")
      ->group(g);
  sub.add_flag("--no-nonneg", f.no_nonneg, "CT: switch the default non-negativity off")->group(g);
  sub.add_option("--model", f.model, "Model file of --method unrolled (from `recofold train`)")
      ->group("Learned (--method unrolled)");
}

bool is_solver_method(const std::string& method) { return parse_solver_method(method).has_value(); }

ImageRecord reconstruct_solver_record(const Measurement& m, const std::string& method_name, const SolveFlags& f,
                                      const CLI::App& sub, const Context& ctx) {
  const SolverMethod method = *parse_solver_method(method_name);
  const bool mri = m.modality == Modality::kMri;
  std::vector<std::string> errors;
  ReconRequest req;
  req.method = method;
  if (f.prior.empty()) {
    req.prior.kind = default_prior(method, mri);
  } else if (const auto k = parse_prior(f.prior)) {
    req.prior.kind = *k;
  } else {
    errors.push_back("--prior = '" + f.prior + "'; expected one of " + accepted_priors());
  }
  if (f.lambda.empty() || f.lambda == "auto") {
    req.lambda_auto = req.prior.kind != PriorKind::kNone;
    if (f.lambda == "auto" && req.prior.kind == PriorKind::kNone) req.lambda_auto = true;  // reported by validate
  } else {
    try {
      size_t used = 0;
      req.prior.lambda = std::stod(f.lambda, &used);
      if (used != f.lambda.size()) throw std::invalid_argument(f.lambda);
    } catch (const std::exception&) {
      errors.push_back("--lambda = '" + f.lambda + "'; expected a number >= 0 or auto");
      req.prior.lambda = 0.0;
    }
    if (req.prior.kind == PriorKind::kNone && given(sub, "--lambda"))
      errors.push_back("--lambda = " + f.lambda + "; --prior none has no weight");
  }
  if (given(sub, "--iters") && f.iters < 1)
    errors.push_back("--iters = " + std::to_string(f.iters) + "; must be >= 1");
  req.iterations = f.iters > 0 ? f.iters : 0;
  const bool wavelet = req.prior.kind == PriorKind::kWavelet;
  for (const char* flag : {"--wavelet", "--levels", "--cycle-spin"})
    if (given(sub, flag) && !wavelet) errors.push_back(std::string(flag) + " only applies with --prior wavelet");
  if (const auto w = parse_wavelet(f.wavelet)) {
    req.prior.wavelet.family = *w;
  } else {
    errors.push_back("--wavelet = '" + f.wavelet + "'; expected one of " + accepted_wavelets());
  }
  req.prior.wavelet.levels = f.levels;
  req.prior.wavelet.cycle_spin = f.cycle_spin;
  req.prior.tv.isotropic = req.prior.kind != PriorKind::kTvAniso;
  if (f.nonneg && f.no_nonneg) errors.push_back("--nonneg conflicts with --no-nonneg");
  const bool nonneg = f.nonneg || (!mri && !f.no_nonneg && req.prior.kind != PriorKind::kNone);
  if (nonneg && req.prior.kind == PriorKind::kNone)
    errors.push_back("--nonneg needs a prior (method " + method_name + " with --prior none is unconstrained)");
  if (nonneg) req.prior.box = Box{};
  if (errors.empty())
    for (const std::string& s : req.validate(m.modality, Shape{m.ny, m.nx})) errors.push_back(s);
  if (!errors.empty()) {
    std::string reason;
    for (const std::string& s : errors) reason += (reason.empty() ? "" : "; ") + s;
    throw InputError("", errors.front().substr(0, errors.front().find_first_of(" :")), reason);
  }

  auto iteration_progress = make_progress(ctx, method_name);
  auto lambda_progress = make_progress(ctx, "lambda auto");
  const ReconResult r = reconstruct_measurement(m, req, "", iteration_progress.get(), lambda_progress.get());
  iteration_progress->finish(r.summary.brief_report());
  if (r.lambda_curve) lambda_progress->finish("lambda " + num(r.lambda));
  say(ctx, r.summary.brief_report());
  say(ctx, "lambda " + num(r.lambda) + ": " + r.lambda_rule);

  ImageRecord rec;
  rec.pixels = NdArray<cfloat>(Shape{r.ny, r.nx});
  // Like the zero-filled SENSE image: a real object (known zero phase) is
  // written as the real part; MRI data of a complex or unknown object stays complex.
  const bool keep_complex = mri && (m.truth_is_complex || !m.truth) && !req.prior.box;
  for (Index i = 0; i < r.ny * r.nx; ++i)
    rec.pixels.data[static_cast<size_t>(i)] = keep_complex ? r.image[i] : cfloat(r.image[i].real(), 0.0f);
  rec.is_complex = keep_complex;
  rec.pixel_spacing_mm[0] = m.pixel_spacing_mm[0];
  rec.pixel_spacing_mm[1] = m.pixel_spacing_mm[1];
  rec.description = r.description;
  rec.text_attrs["method"] = method_name;
  rec.text_attrs["prior"] = std::string(to_string(req.prior.kind));
  if (wavelet) {
    rec.text_attrs["wavelet"] = f.wavelet;
    rec.number_attrs["wavelet_levels"] = f.levels;
    rec.text_attrs["cycle_spin"] = f.cycle_spin ? "on" : "off";
  }
  rec.text_attrs["nonneg"] = nonneg ? "on" : "off";
  // "lambda" is the weight used (as text, so that "learned" fits the same
  // attribute for unrolled models); "lambda_mode" says where it came from.
  rec.text_attrs["lambda"] = num(r.lambda);
  rec.text_attrs["lambda_mode"] = r.lambda_curve ? "auto" : (req.prior.kind == PriorKind::kNone ? "none" : "given");
  rec.text_attrs["lambda_rule"] = r.lambda_rule;
  rec.text_attrs["lambda_rule_name"] = r.lambda_rule_name;
  rec.text_attrs["operator"] = r.operator_name;
  rec.text_attrs["termination"] = std::string(to_string(r.summary.termination));
  rec.number_attrs["iterations"] = static_cast<double>(r.summary.iterations.size());
  rec.number_attrs["seconds"] = r.seconds;
  if (r.lambda_curve) {
    if (r.lambda_target > 0.0) rec.number_attrs["lambda_target"] = r.lambda_target;
    rec.number_attrs["lambda_solves"] = static_cast<double>(r.lambda_curve->points.size());
    rec.tables["/recon/lambda_curve"] = curve_table(*r.lambda_curve, r.lambda_rule, mri);
  }
  rec.tables["/recon/history"] = r.summary.history_table();
  return rec;
}

ImageRecord reconstruct_unrolled_cli(const Measurement& m, const SolveFlags& f, const CLI::App& sub) {
  if (f.model.empty()) throw InputError("", "--model", "--method unrolled needs --model FILE (from `recofold train`)");
  for (const char* flag : {"--prior", "--lambda", "--iters", "--wavelet", "--levels", "--cycle-spin", "--nonneg",
                           "--no-nonneg"})
    if (given(sub, flag))
      throw InputError("", flag, "does not apply to --method unrolled (the model file fixes prior and iterations)");
  std::string warning;
  ImageRecord rec = reconstruct_unrolled_record(m, f.model, &warning);
  if (!warning.empty()) std::cerr << "warning: " << warning << "\n";
  rec.text_attrs["method"] = "unrolled";
  if (rec.text_attrs.count("lambda") == 0) rec.text_attrs["lambda"] = "learned";
  if (rec.text_attrs.count("lambda_rule") == 0) rec.text_attrs["lambda_rule"] = "learned (model file " + f.model + ")";
  return rec;
}

}  // namespace recofold::cli
