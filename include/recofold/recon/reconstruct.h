// SPDX-License-Identifier: Apache-2.0
// reconstruct(): the one way a measurement becomes an image, for every method (recon, studies, training baselines).
#pragma once

#include <functional>
#include <limits>
#include <map>
#include <optional>
#include <string>

#include "recofold/core/image_record.h"
#include "recofold/core/measurement.h"
#include "recofold/core/progress.h"
#include "recofold/recon/lambda_sweep.h"
#include "recofold/recon/recon_spec.h"
#include "recofold/recon/solver_summary.h"

namespace recofold {

// Observers and context of one reconstruction; none changes the image.
struct ReconHooks {
  ProgressSink* iterations = nullptr;  // every solver run (iterations); may be null
  ProgressSink* lambda = nullptr;      // the solves of a lambda rule; may be null
  // The oracle rule's score of an image (higher is better). Null: minus the
  // squared error against the measurement's truth (the magnitude for mri,
  // the real part otherwise); a study passes its own (its region of interest).
  std::function<double(const ImageC& image)> oracle_score;
  // Objective and residual per iteration in the summary (one extra operator
  // apply per iteration; the iterates are the same either way).
  bool record_history = true;
  std::string file;  // names the measurement in errors
};

// How lambda was set.
struct LambdaRecord {
  std::string mode = "none";       // "none" (no prior), "given", "auto", "grid", "learned"
  std::string rule_name = "none";  // "none", "given", "discrepancy", "held-out views", "oracle", "learned"
  double value = std::numeric_limits<double>::quiet_NaN();  // the weight used (NaN without a prior)
  std::string rule;                // one line with the rule's numbers ("given", "none (no prior)", ...)
  std::optional<LambdaCurve> curve;  // every solve of an auto or grid rule
  double target = 0.0;               // discrepancy: the misfit target (0 otherwise)
};

struct Reconstruction {
  ImageC image;             // [ny, nx]; real methods and objects leave the imaginary part 0
  ReconSpec spec;           // the spec as run (after with_defaults)
  SolverSummary summary;    // iterative methods: the solve that produced the image
  LambdaRecord lambda;
  std::string operator_name;  // the forward operator's name (iterative methods)
  std::string description;    // one line: method, prior, lambda, iterations
  double seconds = 0.0;       // wall time of everything
  std::string outside_training;  // unrolled: the training conditions the measurement lies outside ("" inside)
  // Method-specific facts for the output file (combine, coil_maps, filter, model, ...).
  std::map<std::string, std::string> text_attrs;
  std::map<std::string, double> number_attrs;
};

// Reconstructs `m` as `spec` says, after spec.with_defaults(m.modality).
// On mri, spec.maps other than measured first replaces the coil maps on a
// copy of `m` (recon/coil_map_estimate.h; estimated maps of non-Cartesian
// data refused, InputError field "maps"); every method then uses those maps.
//   zero-filled  mri: zero_filled() with zero_filled.combine (recon/zero_filled.h);
//                non-Cartesian mri (mri->trajectory): gridding() with the trajectory's
//                dcf and zero_filled.combine (recon/gridding.h);
//                denoise, inpaint: the observed image (0 at unobserved pixels)
//   fbp          fbp() with fbp.filter, in intensity units (recon/fbp.h)
//   cg .. pdhg   the forward model of make_forward_model (recon/forward_model.h),
//                the prior of spec.prior_spec (with the box for nonneg), the solver
//                with the spec's iterations, tolerance and options, and lambda:
//                  value   the given weight;
//                  auto    discrepancy: ||A x - y||^2 = m v (recon/lambda_discrepancy.h;
//                          v = 2 sigma^2 for complex noise, ct: the transmission noise
//                          energy) by a geometric sweep of at most lambda.max_solves
//                          solves with warm starts; held-out-views (ct,
//                          recon/lambda_held_out.h), then one solve on all views;
//                  grid    oracle: every value solved from zero (each image equals the
//                          fixed-lambda result), the best score (hooks.oracle_score) kept.
//                Non-Cartesian mri: the SENSE-NUFFT forward model (Toeplitz normal).
//   unrolled     the learned backend (recon/learned_backend.h) with spec.model;
//                non-Cartesian measurements are refused (InputError field "method").
// Throws InvalidFields for a spec that fails validate() (field paths), and
// InputError (file hooks.file) for a measurement that does not fit (no noise
// for the discrepancy rule, too few views to hold out, no truth for the
// oracle, no learned backend). Not converging is a result (summary).
Reconstruction reconstruct(const Measurement& m, const ReconSpec& spec, const ReconHooks& hooks = {});

// The image file record of a reconstruction (the same for `recofold recon`
// and a study's kept images): pixels complex for mri of a complex or unknown
// object without non-negativity and not a sum of squares, else the real part;
// attributes method, prior, wavelet, wavelet_levels, cycle_spin, nonneg,
// lambda, lambda_mode, lambda_rule, lambda_rule_name, operator, termination,
// iterations, seconds (and the method's own); tables /recon/history and, for
// a lambda rule, /recon/lambda_curve.
ImageRecord reconstruction_record(const Measurement& m, const Reconstruction& r);

}  // namespace recofold
