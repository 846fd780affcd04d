// SPDX-License-Identifier: Apache-2.0
// reconstruct(): the one method dispatcher (recon/reconstruct.h), and the image record of its result.
#include "recofold/recon/reconstruct.h"

#include <chrono>
#include <cmath>
#include <cstdio>
#include <memory>
#include <utility>

#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/ops/ct_geometry.h"
#include "recofold/priors/constrained.h"
#include "recofold/priors/zero_prior.h"
#include "recofold/recon/admm.h"
#include "recofold/recon/cg.h"
#include "recofold/recon/fbp.h"
#include "recofold/recon/fista.h"
#include "recofold/recon/flow_prior.h"
#include "recofold/recon/coil_map_estimate.h"
#include "recofold/recon/forward_model.h"
#include "recofold/recon/gridding.h"
#include "recofold/recon/ista.h"
#include "recofold/recon/lambda_discrepancy.h"
#include "recofold/recon/lambda_held_out.h"
#include "recofold/recon/learned_backend.h"
#include "recofold/recon/pdhg.h"
#include "recofold/recon/zero_filled.h"

namespace recofold {

namespace {

using Clock = std::chrono::steady_clock;

double since(Clock::time_point t0) { return std::chrono::duration<double>(Clock::now() - t0).count(); }

ImageC as_image(const VecC& x, Index ny, Index nx, bool real_part) {
  ImageC out(ny, nx);
  for (Index k = 0; k < ny * nx; ++k) out.data()[k] = real_part ? cfloat(x[k].real(), 0.0f) : x[k];
  return out;
}

// The solver of an iterative method with the settings of a spec after
// with_defaults: the only place a Method becomes solver options.
RegularisedSolve make_solver(const ReconSpec& r, const LinearOperator& a, const VecC& y, ProgressSink* progress,
                             bool record) {
  const LinearOperator* ap = &a;
  const VecC* yp = &y;
  const int iters = *r.iterations;
  const double tol = *r.tolerance;
  switch (r.method) {
    case Method::kCg: {
      const bool tikhonov = *r.prior.kind == PriorKind::kL2;
      return [=](const Prior& prior, VecC& x) {
        CgOptions o;
        o.max_iterations = iters;
        o.tolerance = tol;
        o.tikhonov = tikhonov ? prior.weight() : 0.0;
        o.record_objective = record;
        return solve_cg(o, *ap, *yp, x, progress);
      };
    }
    case Method::kIsta:
      return [=](const Prior& prior, VecC& x) {
        IstaOptions o;
        o.max_iterations = iters;
        o.relative_tolerance = tol;
        o.record_objective = record;
        return solve_ista(o, *ap, prior, *yp, x, progress);
      };
    case Method::kFista: {
      const bool restart = *r.fista.restart;
      return [=](const Prior& prior, VecC& x) {
        FistaOptions o;
        o.max_iterations = iters;
        o.relative_tolerance = tol;
        o.adaptive_restart = restart;
        o.record_objective = record;
        return solve_fista(o, *ap, prior, *yp, x, progress);
      };
    }
    case Method::kAdmm: {
      const double rho = *r.admm.rho;
      const int cg = *r.admm.cg_iterations;
      return [=](const Prior& prior, VecC& x) {
        AdmmOptions o;
        o.max_iterations = iters;
        o.relative_tolerance = tol;
        o.rho = rho;
        o.cg_iterations = cg;
        o.record_objective = record;
        return solve_admm(o, *ap, prior, *yp, x, progress);
      };
    }
    case Method::kPdhg: {
      const double tau = *r.pdhg.tau, sigma = *r.pdhg.sigma;
      return [=](const Prior& prior, VecC& x) {
        PdhgOptions o;
        o.max_iterations = iters;
        o.relative_tolerance = tol;
        o.tau = tau;
        o.sigma = sigma;
        o.record_gap = false;
        return solve_pdhg(o, *ap, prior, *yp, x, progress);
      };
    }
    default:
      break;
  }
  RECOFOLD_CHECK(false) << "make_solver for a non-iterative method";
  return nullptr;
}

// Minus the squared error of |x| (or Re x) against the truth: the default oracle score.
double truth_score(const Measurement& m, const ImageC& x, bool magnitude) {
  double se = 0.0;
  for (Index k = 0; k < x.size(); ++k) {
    const cfloat t = m.truth->data[static_cast<size_t>(k)];
    const double d = magnitude ? double(std::abs(x.data()[k])) - double(std::abs(t))
                               : double(x.data()[k].real()) - double(t.real());
    se += d * d;
  }
  return -se;
}

std::string spec_summary(const ReconSpec& r, const LambdaRecord& l, int iterations, const std::string& op) {
  const bool prior = r.prior.kind && *r.prior.kind != PriorKind::kNone;
  char buf[320];
  std::snprintf(buf, sizeof buf, "%s%s%s, lambda %.5g (%s), %d iterations, %s", std::string(to_string(r.method)).c_str(),
                prior ? (" + " + std::string(to_string(*r.prior.kind))).c_str() : "",
                r.nonneg.value_or(false) ? " + non-negativity" : "", prior ? l.value : 0.0, l.rule_name.c_str(),
                iterations, op.c_str());
  return buf;
}

// zero-filled of non-Cartesian data: gridding, the DCF-weighted adjoint NUFFT (recon/gridding.h).
void run_gridding(const Measurement& m, Reconstruction& out, const std::string& file) {
  const ReconSpec& r = out.spec;
  const MriData& mri = *m.mri;
  const CoilCombine combine = *r.zero_filled.combine;
  const std::shared_ptr<const NufftPlan> plan = trajectory_plan(m, file);
  const Trajectory& t = *mri.trajectory;
  out.image = gridding(*plan, t.dcf, mri.kspace, mri.coil_maps, combine, file);
  out.operator_name = "gridding, NUFFT " + plan->kernel().to_string();
  out.text_attrs["combine"] = std::string(to_string(combine));
  if (combine == CoilCombine::kSensitivity) out.text_attrs["coil_maps"] = mri.coil_maps_source;
  out.text_attrs["dcf_method"] = t.dcf_method;
  out.text_attrs["trajectory"] = std::string(to_string(t.kind));
  char buf[320];
  std::snprintf(buf, sizeof buf,
                "gridding (DCF-weighted adjoint NUFFT, dcf %s), %s coil combination%s, %lld coils, %lld %s points, "
                "Cartesian-equivalent R %.3f",
                t.dcf_method.c_str(), std::string(to_string(combine)).c_str(),
                combine == CoilCombine::kSensitivity ? (" (" + mri.coil_maps_source + " maps)").c_str() : "",
                static_cast<long long>(mri.kspace.shape[0]), static_cast<long long>(t.points()),
                std::string(to_string(t.kind)).c_str(), mri.acceleration);
  out.description = buf;
}

void run_zero_filled(const Measurement& m, Reconstruction& out, const std::string& file) {
  const ReconSpec& r = out.spec;
  if (m.modality == Modality::kDenoise || m.modality == Modality::kInpaint) {
    // The observed image itself (0 at unobserved pixels).
    const ForwardModel fm = make_forward_model(m, file);
    out.image = ImageC(m.ny, m.nx);
    for (Index k = 0; k < m.ny * m.nx; ++k) out.image.data()[k] = fm.y[k];
    out.operator_name = fm.op->name();
    out.description = "observed image (" + out.operator_name + ")";
    return;
  }
  if (m.modality != Modality::kMri)
    throw InputError(file, "method", "zero-filled does not run on " + std::string(to_string(m.modality)) +
                                         " measurements");
  if (!m.mri) throw InputError(file, "/mri", "an mri measurement without MRI data");
  if (m.mri->non_cartesian()) {
    run_gridding(m, out, file);
    return;
  }
  const MriData& mri = *m.mri;
  const CoilCombine combine = *r.zero_filled.combine;
  out.image = zero_filled(mri, combine, file);
  out.text_attrs["combine"] = std::string(to_string(combine));
  if (combine == CoilCombine::kSensitivity) out.text_attrs["coil_maps"] = mri.coil_maps_source;
  char buf[200];
  std::snprintf(buf, sizeof buf, "zero-filled reconstruction, %s coil combination%s, %lld coils, R %.3f",
                std::string(to_string(combine)).c_str(),
                combine == CoilCombine::kSensitivity ? (" (" + mri.coil_maps_source + " maps)").c_str() : "",
                static_cast<long long>(mri.kspace.shape[0]), mri.acceleration);
  out.description = buf;
}

void run_fbp(const Measurement& m, Reconstruction& out, const std::string& file) {
  FbpOptions o;
  o.filter = *out.spec.fbp.filter;
  const ImageF img = fbp(m, o, file);
  out.image = ImageC(img.rows(), img.cols());
  for (Index k = 0; k < img.size(); ++k) out.image.data()[k] = cfloat(img.data()[k], 0.0f);
  out.text_attrs["filter"] = std::string(to_string(o.filter));
  out.number_attrs["mu_per_mm"] = m.ct->mu_per_mm;
  out.description = "FBP (" + std::string(to_string(o.filter)) + ") of a " + ct_geometry_from(m, file).describe() +
                    " sinogram";
}

void run_unrolled(const Measurement& m, Reconstruction& out, const std::string& file) {
  const LearnedBackendLookup found = find_learned_backend();
  if (!found.backend) throw InputError(file, "method", "unrolled: " + found.reason);
  LearnedReconstruction l = found.backend->reconstruct(m, out.spec.model);
  out.image = std::move(l.image);
  out.outside_training = l.outside_training;
  out.description = l.description;
  out.text_attrs = l.text_attrs;
  out.lambda.mode = "learned";
  out.lambda.rule_name = "learned";
  out.lambda.rule = "learned (model file " + out.spec.model + ")";
  out.summary.solver = "unrolled";
}

// The weights' solves are recorded with their summaries (the chosen solve's history is returned).
using SolveRecord = std::vector<std::pair<double, SolverSummary>>;

// lambda from a grid by the oracle rule: the best score against the truth (or the caller's).
void solve_oracle_grid(const Measurement& m, const ForwardModel& fm, Prior& prior, const RegularisedSolve& solve,
                       VecC& x, Reconstruction& out, const ReconHooks& hooks) {
  const ReconSpec& r = out.spec;
  const std::string& file = hooks.file;
  LambdaRecord& lr = out.lambda;
  if (!hooks.oracle_score && !m.truth)
    throw InputError(file, "lambda", "the oracle rule needs the measurement's truth (/truth/image)");
  const bool magnitude = m.modality == Modality::kMri;
  LambdaCurve curve;
  double best = -std::numeric_limits<double>::infinity();
  for (double lambda : r.lambda.grid) {
    const auto t = Clock::now();
    prior.set_weight(lambda);
    VecC xi;
    const SolverSummary s = solve(prior, xi);
    const ImageC img = as_image(xi, m.ny, m.nx, fm.real_object);
    LambdaPoint pt;
    pt.lambda = lambda;
    pt.objective = s.iterations.empty() ? std::nan("") : s.iterations.back().objective;
    VecC res;
    fm.op->apply(xi, res);
    res -= fm.y;
    pt.residual_squared = static_cast<double>(res.squaredNorm());
    pt.score = hooks.oracle_score ? hooks.oracle_score(img) : truth_score(m, img, magnitude);
    pt.iterations = static_cast<int>(s.iterations.size());
    pt.termination = s.termination;
    pt.seconds = since(t);
    curve.points.push_back(pt);
    if (pt.score > best) {
      best = pt.score;
      curve.best = static_cast<int>(curve.points.size()) - 1;
      x = std::move(xi);
      out.summary = s;
      lr.value = lambda;
    }
    if (hooks.lambda) hooks.lambda->update(static_cast<int64_t>(curve.points.size()),
                                           static_cast<int64_t>(r.lambda.grid.size()), "lambda " + format_number(lambda));
  }
  lr.mode = "grid";
  lr.rule_name = "oracle";
  lr.rule = "oracle: the best of " + std::to_string(r.lambda.grid.size()) + " values against the " +
            (hooks.oracle_score ? "caller's score" : "measurement's truth (squared error)") +
            " (uses the ground truth; not available in practice): lambda = " + format_number(lr.value);
  lr.curve = std::move(curve);
}

// lambda auto on CT by held-out views: chosen, then solved on all views from the warm start.
void solve_held_out(const Measurement& m, Prior& prior, const RegularisedSolve& solve, VecC& x, Reconstruction& out,
                    const ReconHooks& hooks) {
  const ReconSpec& r = out.spec;
  LambdaRecord& lr = out.lambda;
  const ReconSpec* rp = &r;
  const SolveFactory factory = [rp](const LinearOperator& a, const VecC& y) {
    return make_solver(*rp, a, y, nullptr, false);
  };
  HeldOutChoice h = choose_lambda_held_out_views(m, prior, factory, *r.lambda.max_solves, hooks.file, hooks.lambda);
  lr.mode = "auto";
  lr.rule_name = "held-out views";
  lr.value = h.lambda;
  lr.rule = h.rule;
  lr.curve = std::move(h.curve);
  prior.set_weight(h.lambda);
  x = std::move(h.warm_start);
  out.summary = solve(prior, x);
}

// lambda auto by the discrepancy principle (Gaussian noise sigma, or the CT transmission noise).
void solve_discrepancy(const Measurement& m, const ForwardModel& fm, Prior& prior, const RegularisedSolve& solve,
                       VecC& x, Reconstruction& out, const ReconHooks& hooks, const SolveRecord& runs) {
  const ReconSpec& r = out.spec;
  const std::string& file = hooks.file;
  LambdaRecord& lr = out.lambda;
  DiscrepancyOptions d;
  d.max_steps = *r.lambda.max_solves;
  d.complex_noise = fm.complex_noise;
  d.measurement_count = fm.measured_values;
  if (m.modality == Modality::kCt) {
    if (!(m.ct->photons_per_ray > 0.0))
      throw InputError(file, "lambda",
                       "the discrepancy rule needs noisy data (/ct photons_per_ray is 0); give a value");
    d.target = transmission_noise_energy(fm.y, m.ct->photons_per_ray);
  } else {
    d.noise_sigma = fm.noise_sigma;
    if (!(d.noise_sigma > 0.0))
      throw InputError(file, "lambda",
                       "auto needs the measurement's noise sigma (it is " + format_number(d.noise_sigma) +
                           "); give a value");
  }
  // A likelihood prior's natural weight is the noise variance: 1/2||Ax - y||^2 + sigma^2 (-log p(x)) is
  // sigma^2 times -log of the posterior (Gaussian noise of sigma per real value), so the sweep starts there.
  if (*r.prior.kind == PriorKind::kFlow && d.noise_sigma > 0.0) d.lambda_start = d.noise_sigma * d.noise_sigma;
  const DiscrepancyChoice choice = choose_lambda_discrepancy(d, *fm.op, fm.y, prior, solve, x, hooks.lambda);
  lr.mode = "auto";
  lr.rule_name = "discrepancy";
  lr.value = choice.lambda;
  lr.rule = choice.rule;
  lr.target = choice.target;
  lr.curve = choice.curve;
  for (auto it = runs.rbegin(); it != runs.rend(); ++it)
    if (it->first == choice.lambda) {
      out.summary = it->second;
      break;
    }
}

// Prior flow: the likelihood of the flow in spec.model, served by the learn module; in a box when nonneg.
std::unique_ptr<Prior> make_flow_prior(const ReconSpec& r, const Measurement& m, double weight, const std::string& file) {
  const LearnedBackendLookup found = find_learned_backend();
  if (!found.backend) throw InputError(file, "prior", "flow: " + found.reason);
  std::unique_ptr<Prior> p = std::make_unique<FlowPrior>(*found.backend, r.model, m.ny, m.nx, weight);
  p->value(VecC::Zero(m.ny * m.nx));  // reads the model now: a wrong file or grid fails before any solve
  const PriorSpec spec = r.prior_spec(weight);
  if (spec.box) p = std::make_unique<ConstrainedPrior>(std::move(p), *spec.box);
  return p;
}

void run_iterative(const Measurement& m, Reconstruction& out, const ReconHooks& hooks) {
  const ReconSpec& r = out.spec;
  const std::string& file = hooks.file;
  const ForwardModel fm = make_forward_model(m, file);
  const Shape shape{m.ny, m.nx};
  out.operator_name = fm.op->name();
  const bool has_prior = *r.prior.kind != PriorKind::kNone;
  const LambdaMode mode = has_prior ? *r.lambda.mode : LambdaMode::kValue;
  const double start_weight = mode == LambdaMode::kValue ? r.lambda.value : 1.0;
  std::unique_ptr<Prior> prior = !has_prior                          ? std::make_unique<ZeroPrior>()
                                 : *r.prior.kind == PriorKind::kFlow ? make_flow_prior(r, m, start_weight, file)
                                                                     : make_prior(r.prior_spec(start_weight), shape);

  // Every solve's summary with its weight, so the chosen solve's history can be returned.
  SolveRecord runs;
  const RegularisedSolve inner = make_solver(r, *fm.op, fm.y, hooks.iterations, hooks.record_history);
  const RegularisedSolve solve = [&inner, &runs](const Prior& p, VecC& x) {
    SolverSummary s = inner(p, x);
    runs.emplace_back(p.weight(), s);
    return s;
  };
  LambdaRecord& lr = out.lambda;
  VecC x;
  if (!has_prior) {
    out.summary = solve(*prior, x);
    lr.rule = "none (no prior)";
  } else if (mode == LambdaMode::kValue) {
    out.summary = solve(*prior, x);
    lr.mode = lr.rule_name = "given";
    lr.value = r.lambda.value;
    lr.rule = "given";
  } else if (mode == LambdaMode::kGrid) {
    solve_oracle_grid(m, fm, *prior, solve, x, out, hooks);
  } else if (*r.lambda.rule == LambdaRule::kHeldOutViews) {
    solve_held_out(m, *prior, solve, x, out, hooks);
  } else {
    solve_discrepancy(m, fm, *prior, solve, x, out, hooks, runs);
  }
  if (has_prior) out.summary.values["lambda"] = lr.value;
  out.image = as_image(x, m.ny, m.nx, fm.real_object);
  out.description = spec_summary(r, lr, static_cast<int>(out.summary.iterations.size()), out.operator_name);
}

}  // namespace

Reconstruction reconstruct(const Measurement& m, const ReconSpec& spec, const ReconHooks& hooks) {
  const auto t0 = Clock::now();
  throw_if_invalid(spec.validate(m.modality, Shape{m.ny, m.nx}), hooks.file);
  Reconstruction out;
  out.spec = spec.with_defaults(m.modality);
  // Maps other than the file's: estimated once, on a copy, before any method runs.
  std::optional<Measurement> own_maps;
  if (out.spec.maps && *out.spec.maps != CoilMapSource::kMeasured) {
    own_maps = m;
    out.text_attrs["coil_maps_estimate"] = replace_coil_maps(*own_maps, *out.spec.maps, hooks.file,
                                                             out.spec.espirit_options());
    out.text_attrs["coil_maps"] = own_maps->mri->coil_maps_source;
  }
  const Measurement& data = own_maps ? *own_maps : m;
  switch (out.spec.method) {
    case Method::kZeroFilled: run_zero_filled(data, out, hooks.file); break;
    case Method::kFbp: run_fbp(data, out, hooks.file); break;
    case Method::kUnrolled: run_unrolled(data, out, hooks.file); break;
    case Method::kCg:
    case Method::kIsta:
    case Method::kFista:
    case Method::kAdmm:
    case Method::kPdhg: run_iterative(data, out, hooks); break;
  }
  out.seconds = since(t0);
  return out;
}

ImageRecord reconstruction_record(const Measurement& m, const Reconstruction& r) {
  const ReconSpec& s = r.spec;
  ImageRecord rec;
  const Index ny = r.image.rows(), nx = r.image.cols();
  // A real object (known zero phase) is written as the real part; mri data of
  // a complex or unknown object stays complex, except magnitude (sum of
  // squares) and non-negative images.
  const bool sos = s.method == Method::kZeroFilled && s.zero_filled.combine == CoilCombine::kSumOfSquares;
  const bool keep_complex =
      m.modality == Modality::kMri && (m.truth_is_complex || !m.truth) && !s.nonneg.value_or(false) && !sos;
  rec.pixels = NdArray<cfloat>(Shape{ny, nx});
  for (Index i = 0; i < ny * nx; ++i)
    rec.pixels.data[static_cast<size_t>(i)] = keep_complex ? r.image.data()[i] : cfloat(r.image.data()[i].real(), 0.0f);
  rec.is_complex = keep_complex;
  rec.pixel_spacing_mm[0] = m.pixel_spacing_mm[0];
  rec.pixel_spacing_mm[1] = m.pixel_spacing_mm[1];
  rec.description = r.description;
  rec.text_attrs = r.text_attrs;
  rec.number_attrs = r.number_attrs;
  rec.text_attrs["method"] = std::string(to_string(s.method));
  rec.number_attrs["seconds"] = r.seconds;
  if (!r.outside_training.empty()) rec.text_attrs["warning"] = "measurement outside the training conditions: " + r.outside_training;
  if (s.method == Method::kUnrolled) {
    rec.text_attrs["lambda"] = "learned";
    rec.text_attrs["lambda_rule"] = r.lambda.rule;
    return rec;
  }
  if (!is_iterative(s.method)) return rec;
  const PriorKind kind = *s.prior.kind;
  rec.text_attrs["prior"] = std::string(to_string(kind));
  if (kind == PriorKind::kWavelet) {
    rec.text_attrs["wavelet"] = std::string(to_string(*s.prior.wavelet.family));
    rec.number_attrs["wavelet_levels"] = *s.prior.wavelet.levels;
    rec.text_attrs["cycle_spin"] = *s.prior.wavelet.cycle_spin ? "on" : "off";
  }
  if (kind == PriorKind::kFlow) rec.text_attrs["prior_model"] = s.model;
  rec.text_attrs["nonneg"] = *s.nonneg ? "on" : "off";
  // "lambda" is the weight used (as text, so that "learned" fits the same
  // attribute for unrolled models); "lambda_mode" says where it came from.
  rec.text_attrs["lambda"] = kind == PriorKind::kNone ? "0" : format_number(r.lambda.value);
  rec.text_attrs["lambda_mode"] = r.lambda.mode;
  rec.text_attrs["lambda_rule"] = r.lambda.rule;
  rec.text_attrs["lambda_rule_name"] = r.lambda.rule_name;
  rec.text_attrs["operator"] = r.operator_name;
  rec.text_attrs["termination"] = std::string(to_string(r.summary.termination));
  rec.number_attrs["iterations"] = static_cast<double>(r.summary.iterations.size());
  if (r.lambda.curve) {
    if (r.lambda.target > 0.0) rec.number_attrs["lambda_target"] = r.lambda.target;
    rec.number_attrs["lambda_solves"] = static_cast<double>(r.lambda.curve->points.size());
    Table t = r.lambda.curve->table();
    const bool held_out = r.lambda.rule_name == "held-out views";
    t.text_attrs["rule"] = r.lambda.rule;
    t.text_attrs["score"] = held_out                          ? "held-out view misfit ||A_h x - y_h||^2 (lower is better)"
                            : r.lambda.rule_name == "oracle" ? "oracle score (higher is better)"
                                                              : "none";
    t.text_attrs["residual_squared"] = held_out ? "training-view misfit ||A_t x - y_t||^2" : "||A x - y||^2";
    rec.tables["/recon/lambda_curve"] = t;
  }
  rec.tables["/recon/history"] = r.summary.history_table();
  return rec;
}

}  // namespace recofold
