// SPDX-License-Identifier: Apache-2.0
// ReconSpec: one description of how a method runs, with the one home of its defaults and its field-path checks.
//
// Every front end fills a ReconSpec with what the user gave and leaves the
// rest unset: `recofold recon` from flags, a study from its [[method]]
// tables, the training baselines in code. reconstruct() (recon/reconstruct.h)
// then fills the unset fields with with_defaults() — the only place defaults
// live — so one method with the same settings runs exactly one way everywhere.
//
// Field paths (errors, the CLI's flag map, the study's TOML key map):
//   method                      Method
//   prior                       PriorKind (none, l2, wavelet, tv, tv-aniso, flow)
//   prior.wavelet.family        db1 .. db4
//   prior.wavelet.levels        decomposition levels
//   prior.wavelet.cycle_spin    random cycle spinning per prox call
//   lambda                      the weight: a value, auto, or a grid
//   lambda.rule                 how auto / a grid chooses: discrepancy, held-out-views, oracle
//   lambda.max_solves           solves of an auto rule's sweep
//   iterations, tolerance       of the iterative solver (of every solve of a lambda rule)
//   fista.restart               adaptive restart
//   admm.rho, admm.cg_iterations
//   pdhg.tau, pdhg.sigma        explicit steps (both or neither)
//   fbp.filter                  FBP window
//   zero_filled.combine         coil combination of zero-filled MRI
//   maps                        coil maps of every MRI method: measured, estimated, espirit
//   espirit.kernel_size, espirit.calibration_size, espirit.singular_threshold, espirit.crop_threshold
//                               ESPIRiT options (maps = espirit only; ops/espirit.h)
//   nonneg                      non-negativity (a box x >= 0 around the prior)
//   model                       the model file of method unrolled, or the flow of prior flow
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/field_error.h"
#include "recofold/core/measurement.h"
#include "recofold/ops/espirit.h"
#include "recofold/ops/wavelet.h"
#include "recofold/priors/prior_spec.h"
#include "recofold/recon/fbp.h"
#include "recofold/recon/method.h"
#include "recofold/recon/zero_filled.h"

namespace recofold {

// How the prior weight lambda is set.
enum class LambdaMode {
  kValue,  // the given value
  kAuto,   // chosen per measurement by a rule (lambda.rule)
  kGrid,   // the best of a list of values by a rule (oracle)
};
std::string_view to_string(LambdaMode mode);  // "value", "auto", "grid"

// The rules that choose lambda (recon/reconstruct.h documents each):
//   discrepancy     Morozov's discrepancy principle with the measurement's noise (mri, denoise, inpaint)
//   held-out-views  cross-validation on every 6th view (ct)
//   oracle          the grid value whose image is closest to the known truth (labelled as such)
enum class LambdaRule { kDiscrepancy, kHeldOutViews, kOracle };
std::string_view to_string(LambdaRule rule);
std::optional<LambdaRule> parse_lambda_rule(std::string_view text);
std::string accepted_lambda_rules();  // "discrepancy, held-out-views, oracle"

// Where an MRI reconstruction takes its coil maps from (recon/coil_map_estimate.h).
enum class CoilMapSource {
  kMeasured,   // "measured": the file's maps
  kEstimated,  // "estimated" (also "lowres"): a low-resolution estimate from the fully sampled centre
  kEspirit,    // "espirit": ESPIRiT from the calibration data (Cartesian centre or gridded trajectory centre)
};
std::string_view to_string(CoilMapSource source);
std::optional<CoilMapSource> parse_coil_map_source(std::string_view text);
std::string coil_map_source_names();  // "measured, estimated (or lowres), espirit"

struct LambdaSpec {
  std::optional<LambdaMode> mode;  // unset: auto when there is a prior
  double value = 0.0;              // kValue: >= 0
  std::vector<double> grid;        // kGrid: >= 1 values, each >= 0
  std::optional<LambdaRule> rule;  // unset: auto -> discrepancy (held-out-views on ct); grid -> oracle
  std::optional<int> max_solves;   // auto only, >= 2
};

struct ReconSpec {
  Method method = Method::kFista;

  struct Wavelet {
    std::optional<WaveletFamily> family;
    std::optional<int> levels;
    std::optional<bool> cycle_spin;
    uint64_t cycle_spin_seed = 1;  // seed of the cycle-spinning shifts
  };
  struct Prior {
    std::optional<PriorKind> kind;
    Wavelet wavelet;
  } prior;

  LambdaSpec lambda;
  std::optional<int> iterations;   // >= 1
  std::optional<double> tolerance;  // relative change ||x_k - x_{k-1}|| / ||x_k|| to stop at, >= 0 (0: never)

  struct {
    std::optional<bool> restart;
  } fista;
  struct {
    std::optional<double> rho;            // > 0, or 0: 10 lambda (residual balancing adapts it)
    std::optional<int> cg_iterations;     // inner CG steps per x-update, >= 1
  } admm;
  struct {
    std::optional<double> tau;    // > 0 with sigma, or 0 (both): automatic steps
    std::optional<double> sigma;
  } pdhg;
  struct {
    std::optional<FbpFilter> filter;
  } fbp;
  struct {
    std::optional<CoilCombine> combine;
  } zero_filled;
  // Coil maps of every MRI method (SENSE in zero-filled, the forward model
  // of the iterative and unrolled methods); unset on mri: measured.
  std::optional<CoilMapSource> maps;
  struct {
    std::optional<int> kernel_size, calibration_size;
    std::optional<double> singular_threshold, crop_threshold;
  } espirit;  // only with maps = espirit
  std::optional<bool> nonneg;
  std::string model;  // unrolled: model file; prior flow: the flow model file

  // A copy with every field that applies to `method` on `modality` and is
  // unset filled in. THE defaults (DEVELOPERS.md, "Where defaults live"):
  //   prior             cg: none; ista, fista: wavelet (mri), tv (ct, denoise, inpaint); admm, pdhg: tv
  //   prior.wavelet     db4, 3 levels, cycle spinning on
  //   lambda            auto when there is a prior; rule discrepancy (ct: held-out-views), a grid: oracle;
  //                     lambda.max_solves 16 (ct: 12)
  //   iterations        cg 12, ista 100, fista 60, admm 30, pdhg 150
  //   tolerance         cg 1e-6, ista 1e-6, fista 0 (a fixed count: the change is noisy under
  //                     cycle spinning), admm 1e-4, pdhg 1e-4
  //   fista.restart     on;  admm.rho 0 (automatic), admm.cg_iterations 4;  pdhg.tau, sigma 0 (automatic)
  //   fbp.filter        ram-lak
  //   zero_filled       combine sense (sum conj(S) x / sum |S|^2), maps measured
  //   espirit           (maps = espirit) kernel 6, calibration 24, singular threshold 0.02, crop 0.9
  //   nonneg            on for ct with a prior (not cg: it keeps no box), off otherwise
  // Fields that do not apply stay unset.
  ReconSpec with_defaults(Modality modality) const;

  // Every violation, by field path, of this spec for a measurement of
  // `modality` on an `image_shape` grid: fields given that do not apply to the
  // method or prior, values out of range (checked after with_defaults, so a
  // default that cannot work, such as 3 wavelet levels on a 20x20 grid, is
  // reported too), a method that does not run on the modality. Empty = valid.
  std::vector<FieldError> validate(Modality modality, const Shape& image_shape) const;

  // The prior of a spec after with_defaults, with weight `lambda`, as the
  // priors module builds it (kind none gives PriorKind::kNone; nonneg the box).
  PriorSpec prior_spec(double lambda) const;

  // The ESPIRiT options of a spec after with_defaults (the defaults of ops/espirit.h when maps != espirit).
  EspiritOptions espirit_options() const;

 private:
  // The parts of validate(); `r` is with_defaults(modality) of this spec.
  void check_applicable(Modality modality, const ReconSpec& r, std::vector<FieldError>& e) const;
  void check_prior_choice(const ReconSpec& r, const Shape& shape, std::vector<FieldError>& e) const;
  void check_lambda(Modality modality, const ReconSpec& r, std::vector<FieldError>& e) const;
  void check_solver_options(const ReconSpec& r, std::vector<FieldError>& e) const;
};

// The largest number of wavelet levels the grid allows: the largest L with
// 2^L dividing both sides (at least 0), capped at 8.
int max_wavelet_levels(const Shape& image_shape);

}  // namespace recofold
