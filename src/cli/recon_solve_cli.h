// SPDX-License-Identifier: Apache-2.0
// Iterative parts of `recofold recon` (cg, ista, fista, admm, pdhg and unrolled): flags, defaults, output record.
#pragma once

#include <CLI/CLI.hpp>

#include <string>

#include "cli_common.h"
#include "recofold/core/image_record.h"
#include "recofold/core/measurement.h"

namespace recofold::cli {

// The flag group of the iterative methods (`recon` rejects these flags for zero-filled and fbp).
extern const char* const kSolveGroup;

// Flags of the iterative methods. Empty strings / 0 mean "the default for the
// method and modality" (see add_solve_flags' help texts).
struct SolveFlags {
  std::string prior;          // --prior none|l2|wavelet|tv|tv-aniso
  std::string lambda;         // --lambda L|auto (default auto with a prior)
  int iters = 0;              // --iters K (0 = not given: the method's default)
  std::string wavelet = "db4";  // --wavelet
  int levels = 4;             // --levels
  bool cycle_spin = true;     // --cycle-spin / --no-cycle-spin
  bool nonneg = false;        // --nonneg (default on for CT)
  bool no_nonneg = false;     // --no-nonneg
  std::string model;          // --model M (unrolled)
};

// Adds the flags above to `recon`.
void add_solve_flags(CLI::App& sub, SolveFlags& flags);

// True for the methods handled here: cg, ista, fista, admm, pdhg.
bool is_solver_method(const std::string& method);

// Runs a solver method on `m` with progress on stderr and returns the image
// record: pixels, description, text_attrs method, prior, lambda_rule,
// operator; number_attrs lambda (and lambda_target, misfit_floor for auto);
// tables /recon/history (the solve's history) and, for auto, /recon/lambda_curve.
// Bad flags throw InputError naming the flag.
ImageRecord reconstruct_solver_record(const Measurement& m, const std::string& method, const SolveFlags& flags,
                                      const CLI::App& sub, const Context& ctx);

// `--method unrolled`: checks --model and runs the learned model (learn_cli.h),
// printing its out-of-range warning to stderr.
ImageRecord reconstruct_unrolled_cli(const Measurement& m, const SolveFlags& flags, const CLI::App& sub);

}  // namespace recofold::cli
