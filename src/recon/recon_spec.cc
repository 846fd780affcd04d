// SPDX-License-Identifier: Apache-2.0
// ReconSpec: names of its enums, the defaults (with_defaults) and the field-path checks (validate).
#include "recofold/recon/recon_spec.h"

#include <cmath>

#include "recofold/core/error.h"
#include "recofold/core/number_format.h"

namespace recofold {

std::string_view to_string(LambdaMode mode) {
  switch (mode) {
    case LambdaMode::kValue: return "value";
    case LambdaMode::kAuto: return "auto";
    case LambdaMode::kGrid: return "grid";
  }
  return "value";
}

std::string_view to_string(LambdaRule rule) {
  switch (rule) {
    case LambdaRule::kDiscrepancy: return "discrepancy";
    case LambdaRule::kHeldOutViews: return "held-out-views";
    case LambdaRule::kOracle: return "oracle";
  }
  return "discrepancy";
}

std::optional<LambdaRule> parse_lambda_rule(std::string_view text) {
  for (LambdaRule r : {LambdaRule::kDiscrepancy, LambdaRule::kHeldOutViews, LambdaRule::kOracle})
    if (text == to_string(r)) return r;
  return std::nullopt;
}

std::string accepted_lambda_rules() { return "discrepancy, held-out-views, oracle"; }

std::string_view to_string(CoilMapSource source) {
  switch (source) {
    case CoilMapSource::kEstimated: return "estimated";
    case CoilMapSource::kEspirit: return "espirit";
    case CoilMapSource::kMeasured: break;
  }
  return "measured";
}

std::optional<CoilMapSource> parse_coil_map_source(std::string_view text) {
  if (text == "measured") return CoilMapSource::kMeasured;
  if (text == "estimated" || text == "lowres") return CoilMapSource::kEstimated;
  if (text == "espirit") return CoilMapSource::kEspirit;
  return std::nullopt;
}

std::string coil_map_source_names() { return "measured, estimated (or lowres), espirit"; }

int max_wavelet_levels(const Shape& s) {
  if (s.rank() != 2) return 0;
  int l = 0;
  while (l < 8 && s[0] % (Index(2) << l) == 0 && s[1] % (Index(2) << l) == 0) ++l;
  return l;
}

namespace {

bool has_prior(const ReconSpec& s) { return s.prior.kind && *s.prior.kind != PriorKind::kNone; }

PriorKind default_prior(Method method, Modality modality) {
  switch (method) {
    case Method::kCg: return PriorKind::kNone;
    case Method::kIsta:
    case Method::kFista: return modality == Modality::kMri ? PriorKind::kWavelet : PriorKind::kTv;
    case Method::kAdmm:
    case Method::kPdhg: return PriorKind::kTv;
    default: return PriorKind::kNone;
  }
}

int default_iterations(Method method) {
  switch (method) {
    case Method::kCg: return 12;
    case Method::kIsta: return 100;
    case Method::kFista: return 60;
    case Method::kAdmm: return 30;
    case Method::kPdhg: return 150;
    default: return 0;
  }
}

double default_tolerance(Method method) {
  switch (method) {
    case Method::kCg:
    case Method::kIsta: return 1e-6;
    case Method::kFista: return 0.0;
    case Method::kAdmm:
    case Method::kPdhg: return 1e-4;
    default: return 0.0;
  }
}

std::string num(double v) { return format_number(v); }
std::string name(bool b) { return b ? "true" : "false"; }

}  // namespace


ReconSpec ReconSpec::with_defaults(Modality modality) const {
  ReconSpec r = *this;
  const bool iterative = is_iterative(method);
  if (iterative) {
    if (!r.prior.kind) r.prior.kind = default_prior(method, modality);
    if (*r.prior.kind == PriorKind::kWavelet) {
      if (!r.prior.wavelet.family) r.prior.wavelet.family = WaveletFamily::kDb4;
      if (!r.prior.wavelet.levels) r.prior.wavelet.levels = 3;
      if (!r.prior.wavelet.cycle_spin) r.prior.wavelet.cycle_spin = true;
    }
    if (has_prior(r)) {
      if (!r.lambda.mode) r.lambda.mode = LambdaMode::kAuto;
      if (!r.lambda.rule && *r.lambda.mode == LambdaMode::kAuto)
        r.lambda.rule = modality == Modality::kCt ? LambdaRule::kHeldOutViews : LambdaRule::kDiscrepancy;
      if (!r.lambda.rule && *r.lambda.mode == LambdaMode::kGrid) r.lambda.rule = LambdaRule::kOracle;
      if (!r.lambda.max_solves && *r.lambda.mode == LambdaMode::kAuto)
        r.lambda.max_solves = modality == Modality::kCt ? 12 : 16;
    }
    if (!r.iterations) r.iterations = default_iterations(method);
    if (!r.tolerance) r.tolerance = default_tolerance(method);
    if (method == Method::kFista && !r.fista.restart) r.fista.restart = true;
    if (method == Method::kAdmm) {
      if (!r.admm.rho) r.admm.rho = 0.0;
      if (!r.admm.cg_iterations) r.admm.cg_iterations = 4;
    }
    if (method == Method::kPdhg) {
      if (!r.pdhg.tau) r.pdhg.tau = 0.0;
      if (!r.pdhg.sigma) r.pdhg.sigma = 0.0;
    }
    if (!r.nonneg) r.nonneg = modality == Modality::kCt && has_prior(r) && method != Method::kCg;
  }
  if (method == Method::kFbp && !r.fbp.filter) r.fbp.filter = FbpFilter::kRamLak;
  if (method == Method::kZeroFilled && modality == Modality::kMri) {
    if (!r.zero_filled.combine) r.zero_filled.combine = CoilCombine::kSensitivity;
  }
  if (modality == Modality::kMri && method != Method::kFbp && !r.maps) r.maps = CoilMapSource::kMeasured;
  if (r.maps == CoilMapSource::kEspirit) {
    const EspiritOptions d;
    if (!r.espirit.kernel_size) r.espirit.kernel_size = d.kernel_size;
    if (!r.espirit.calibration_size) r.espirit.calibration_size = d.calibration_size;
    if (!r.espirit.singular_threshold) r.espirit.singular_threshold = d.singular_threshold;
    if (!r.espirit.crop_threshold) r.espirit.crop_threshold = d.crop_threshold;
  }
  return r;
}

EspiritOptions ReconSpec::espirit_options() const {
  EspiritOptions o;
  if (espirit.kernel_size) o.kernel_size = *espirit.kernel_size;
  if (espirit.calibration_size) o.calibration_size = *espirit.calibration_size;
  if (espirit.singular_threshold) o.singular_threshold = *espirit.singular_threshold;
  if (espirit.crop_threshold) o.crop_threshold = *espirit.crop_threshold;
  return o;
}

namespace {

void not_for(std::vector<FieldError>& e, const std::string& field, const std::string& value, const std::string& where) {
  e.push_back({field, value, "applies only to " + where});
}

}  // namespace

// A method that does not run on the modality; fields given that do not apply to the method or prior.
void ReconSpec::check_applicable(Modality modality, const ReconSpec& r, std::vector<FieldError>& e) const {
  const std::string method_name(to_string(method));
  if (!runs_on(method, modality))
    e.push_back({"method", method_name,
                 "does not run on " + std::string(to_string(modality)) + " measurements" +
                     (method == Method::kFbp ? " (fbp reconstructs ct)" : " (zero-filled: mri, denoise, inpaint)")});

  // Fields given that do not apply.
  if (!is_iterative(method)) {
    if (prior.kind && *prior.kind != PriorKind::kNone)
      e.push_back({"prior", std::string(to_string(*prior.kind)), "method " + method_name + " takes no prior"});
    if (lambda.mode) e.push_back({"lambda", std::string(to_string(*lambda.mode)), "method " + method_name + " has no prior weight"});
    if (iterations) not_for(e, "iterations", std::to_string(*iterations), "the iterative methods (cg, ista, fista, admm, pdhg)");
    if (tolerance) not_for(e, "tolerance", num(*tolerance), "the iterative methods (cg, ista, fista, admm, pdhg)");
    if (nonneg) not_for(e, "nonneg", name(*nonneg), "the iterative methods with a prior");
  }
  if (method != Method::kFista && fista.restart) not_for(e, "fista.restart", name(*fista.restart), "method fista");
  if (method != Method::kAdmm) {
    if (admm.rho) not_for(e, "admm.rho", num(*admm.rho), "method admm");
    if (admm.cg_iterations) not_for(e, "admm.cg_iterations", std::to_string(*admm.cg_iterations), "method admm");
  }
  if (method != Method::kPdhg) {
    if (pdhg.tau) not_for(e, "pdhg.tau", num(*pdhg.tau), "method pdhg");
    if (pdhg.sigma) not_for(e, "pdhg.sigma", num(*pdhg.sigma), "method pdhg");
  }
  if (method != Method::kFbp && fbp.filter) not_for(e, "fbp.filter", std::string(to_string(*fbp.filter)), "method fbp");
  if (method != Method::kZeroFilled || modality != Modality::kMri) {
    if (zero_filled.combine)
      not_for(e, "zero_filled.combine", std::string(to_string(*zero_filled.combine)), "method zero-filled on mri");
  }
  if (maps && (modality != Modality::kMri || method == Method::kFbp))
    not_for(e, "maps", std::string(to_string(*maps)), "mri measurements");
  if (maps && *maps != CoilMapSource::kMeasured && method == Method::kZeroFilled && zero_filled.combine &&
      *zero_filled.combine != CoilCombine::kSensitivity)
    e.push_back({"maps", std::string(to_string(*maps)), "applies to zero-filled only with zero_filled.combine = sense"});
  if (r.maps == CoilMapSource::kEspirit) {
    for (FieldError& f : parse_field_messages(r.espirit_options().validate())) e.push_back(std::move(f));
  } else {
    const char* const where = "maps = espirit";
    if (espirit.kernel_size) not_for(e, "espirit.kernel_size", std::to_string(*espirit.kernel_size), where);
    if (espirit.calibration_size)
      not_for(e, "espirit.calibration_size", std::to_string(*espirit.calibration_size), where);
    if (espirit.singular_threshold) not_for(e, "espirit.singular_threshold", num(*espirit.singular_threshold), where);
    if (espirit.crop_threshold) not_for(e, "espirit.crop_threshold", num(*espirit.crop_threshold), where);
  }
  const bool flow_prior = r.prior.kind && *r.prior.kind == PriorKind::kFlow;
  if (method != Method::kUnrolled && !flow_prior && !model.empty())
    not_for(e, "model", "'" + model + "'", "method unrolled and prior flow");
  if (method == Method::kUnrolled && model.empty())
    e.push_back({"model", "", "missing; method unrolled needs a model file (from `recofold train`)"});

  if (!(r.prior.kind && *r.prior.kind == PriorKind::kWavelet)) {
    if (prior.wavelet.family)
      not_for(e, "prior.wavelet.family", std::string(to_string(*prior.wavelet.family)), "prior wavelet");
    if (prior.wavelet.levels) not_for(e, "prior.wavelet.levels", std::to_string(*prior.wavelet.levels), "prior wavelet");
    if (prior.wavelet.cycle_spin) not_for(e, "prior.wavelet.cycle_spin", name(*prior.wavelet.cycle_spin), "prior wavelet");
  }
}

// The prior a method takes; wavelet levels that fit the grid.
void ReconSpec::check_prior_choice(const ReconSpec& r, const Shape& shape, std::vector<FieldError>& e) const {
  const std::string method_name(to_string(method));
  const PriorKind kind = *r.prior.kind;
  const std::string kind_name(to_string(kind));
  if (method == Method::kCg && kind != PriorKind::kNone && kind != PriorKind::kL2)
    e.push_back({"prior", kind_name, "method cg takes prior none or l2 (lambda is the Tikhonov weight)"});
  if (kind == PriorKind::kNone && method != Method::kCg)
    e.push_back({"prior", "none",
                 "method " + method_name +
                     " needs a prior (l2, wavelet, tv, tv-aniso, flow); without one it is plain least squares: use method cg"});
  if (kind == PriorKind::kFlow) {
    if (method != Method::kIsta && method != Method::kFista)
      e.push_back({"prior", "flow",
                   "is a smooth likelihood prior (gradient steps on -log p): method " + method_name +
                       " needs a prior with an analysis form; use method ista or fista"});
    if (model.empty()) e.push_back({"model", "", "missing; prior flow needs a flow model file (from `recofold train`)"});
  }
  if (kind == PriorKind::kWavelet) {
    const int top = max_wavelet_levels(shape);
    const int levels = *r.prior.wavelet.levels;
    if (levels < 1 || levels > top)
      e.push_back({"prior.wavelet.levels", std::to_string(levels) + (prior.wavelet.levels ? "" : " (default)"),
                   top >= 1 ? "must be 1.." + std::to_string(top) + " for " + std::to_string(shape[0]) + "x" +
                                  std::to_string(shape[1])
                            : "the " + shape.to_string() + " grid has an odd side: no wavelet levels fit"});
  }

}

// The weight: a value, auto or a grid, and the rule that chooses it.
void ReconSpec::check_lambda(Modality modality, const ReconSpec& r, std::vector<FieldError>& e) const {
  const PriorKind kind = *r.prior.kind;
  if (kind == PriorKind::kNone) {
    if (lambda.mode) e.push_back({"lambda", lambda.mode == LambdaMode::kValue ? num(lambda.value) : std::string(to_string(*lambda.mode)), "prior none has no weight"});
    if (lambda.rule) not_for(e, "lambda.rule", std::string(to_string(*lambda.rule)), "a prior's weight");
    if (lambda.max_solves) not_for(e, "lambda.max_solves", std::to_string(*lambda.max_solves), "lambda auto");
  } else {
    const LambdaMode mode = *r.lambda.mode;
    if (mode == LambdaMode::kValue && !(lambda.value >= 0.0 && std::isfinite(lambda.value)))
      e.push_back({"lambda", num(lambda.value), "must be >= 0 and finite, or auto"});
    if (mode == LambdaMode::kGrid) {
      if (lambda.grid.empty()) e.push_back({"lambda", "[]", "a grid needs at least one value"});
      for (size_t i = 0; i < lambda.grid.size(); ++i)
        if (!(lambda.grid[i] >= 0.0 && std::isfinite(lambda.grid[i]))) {
          e.push_back({"lambda[" + std::to_string(i) + "]", num(lambda.grid[i]), "must be >= 0 and finite"});
          break;
        }
    }
    if (mode == LambdaMode::kValue && lambda.rule)
      not_for(e, "lambda.rule", std::string(to_string(*lambda.rule)), "lambda auto or a grid");
    if (mode == LambdaMode::kAuto && r.lambda.rule == LambdaRule::kOracle)
      e.push_back({"lambda.rule", "oracle", "chooses from a grid of values; give lambda as a list"});
    if (mode == LambdaMode::kAuto && r.lambda.rule == LambdaRule::kHeldOutViews && modality != Modality::kCt)
      e.push_back({"lambda.rule", "held-out-views", "needs a CT measurement (it holds out views)"});
    if (mode == LambdaMode::kGrid && r.lambda.rule != LambdaRule::kOracle)
      e.push_back({"lambda.rule", std::string(to_string(*r.lambda.rule)), "a grid is chosen by the oracle rule"});
    if (lambda.max_solves && mode != LambdaMode::kAuto)
      not_for(e, "lambda.max_solves", std::to_string(*lambda.max_solves), "lambda auto");
    if (r.lambda.max_solves && *r.lambda.max_solves < 2)
      e.push_back({"lambda.max_solves", std::to_string(*r.lambda.max_solves), "must be >= 2"});
  }

}

// Iterations, tolerance, ADMM and PDHG options, the non-negativity box.
void ReconSpec::check_solver_options(const ReconSpec& r, std::vector<FieldError>& e) const {
  const PriorKind kind = *r.prior.kind;
  if (*r.iterations < 1 || *r.iterations > 1000000)
    e.push_back({"iterations", std::to_string(*r.iterations), "must be in 1..1000000"});
  if (!(*r.tolerance >= 0.0 && std::isfinite(*r.tolerance)))
    e.push_back({"tolerance", num(*r.tolerance), "must be >= 0 (0: run every iteration)"});
  if (method == Method::kAdmm) {
    if (!(*r.admm.rho >= 0.0 && std::isfinite(*r.admm.rho)))
      e.push_back({"admm.rho", num(*r.admm.rho), "must be > 0, or 0 for 10 lambda"});
    if (*r.admm.cg_iterations < 1 || *r.admm.cg_iterations > 10000)
      e.push_back({"admm.cg_iterations", std::to_string(*r.admm.cg_iterations), "must be in 1..10000"});
  }
  if (method == Method::kPdhg) {
    const double tau = *r.pdhg.tau, sigma = *r.pdhg.sigma;
    if (!(tau >= 0.0 && std::isfinite(tau))) e.push_back({"pdhg.tau", num(tau), "must be > 0, or 0 for automatic steps"});
    if (!(sigma >= 0.0 && std::isfinite(sigma)))
      e.push_back({"pdhg.sigma", num(sigma), "must be > 0, or 0 for automatic steps"});
    if ((tau > 0.0) != (sigma > 0.0))
      e.push_back({tau > 0.0 ? "pdhg.sigma" : "pdhg.tau", num(tau > 0.0 ? sigma : tau),
                   "give pdhg.tau and pdhg.sigma together (or neither, for automatic steps)"});
  }
  if (*r.nonneg && method == Method::kCg)
    e.push_back({"nonneg", "true", "method cg solves the normal equations and keeps no box; use fista, admm or pdhg"});
  else if (*r.nonneg && kind == PriorKind::kNone)
    e.push_back({"nonneg", "true", "needs a prior (method cg with prior none is unconstrained least squares)"});
}

std::vector<FieldError> ReconSpec::validate(Modality modality, const Shape& shape) const {
  std::vector<FieldError> e;
  const ReconSpec r = with_defaults(modality);
  check_applicable(modality, r, e);
  if (!is_iterative(method)) return e;
  check_prior_choice(r, shape, e);
  check_lambda(modality, r, e);
  check_solver_options(r, e);
  return e;
}

PriorSpec ReconSpec::prior_spec(double lambda_value) const {
  RECOFOLD_CHECK(prior.kind.has_value() && nonneg.has_value()) << "prior_spec() of a spec without with_defaults()";
  PriorSpec p;
  p.kind = *prior.kind;
  p.lambda = lambda_value;
  if (p.kind == PriorKind::kWavelet) {
    RECOFOLD_CHECK(prior.wavelet.family && prior.wavelet.levels && prior.wavelet.cycle_spin);
    p.wavelet.family = *prior.wavelet.family;
    p.wavelet.levels = *prior.wavelet.levels;
    p.wavelet.cycle_spin = *prior.wavelet.cycle_spin;
    p.wavelet.cycle_spin_seed = prior.wavelet.cycle_spin_seed;
  }
  p.tv.isotropic = p.kind != PriorKind::kTvAniso;
  if (*nonneg) p.box = Box{};
  return p;
}

}  // namespace recofold
