// SPDX-License-Identifier: Apache-2.0
// The outcome of an iterative solve: termination, message, per-iteration history, history table.
#pragma once

#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/image_record.h"

namespace recofold {

enum class Termination {
  kConverged,      // the relative-change (or gap / residual) tolerance was met
  kMaxIterations,  // hit max_iterations; the image is the last iterate and usable
  kDiverged,       // the objective grew beyond any sensible bound
  kNonFinite,      // NaN or infinity appeared; the image is not usable
};

std::string_view to_string(Termination t);  // "converged", "max-iterations", "diverged", "non-finite"

// One iteration k (1-based). Fields a solver does not compute are NaN.
struct IterationRecord {
  int iteration = 0;
  double objective = 0.0;        // the solver's objective at x_k (e.g. 1/2||Ax-y||^2 + lambda R(x))
  double data_residual = 0.0;    // ||A x_k - y||_2
  double relative_change = 0.0;  // ||x_k - x_{k-1}|| / ||x_k||
  double seconds = 0.0;          // wall time of this iteration
  double gap = 0.0;              // primal-dual gap (PDHG), NaN elsewhere
};

struct SolverSummary {
  std::string solver;  // "cg", "ista", "fista", "admm", "pdhg", "unrolled"
  Termination termination = Termination::kMaxIterations;
  std::string message;  // one human-readable sentence on why it stopped
  std::vector<IterationRecord> iterations;
  double total_seconds = 0.0;
  // Scalars worth keeping with the result: "step_size", "lipschitz", "tau",
  // "sigma", "rho", "lambda", ... (solver-specific; documented by each solver).
  std::map<std::string, double> values;

  // kConverged or kMaxIterations with a finite last objective (or no records).
  bool is_usable() const;
  // "fista: converged after 87 iterations (relative change 9.6e-07 < 1e-06), objective 12.34, 1.9 s"
  std::string brief_report() const;
  // The history as a table with columns iteration, objective, data_residual,
  // relative_change, seconds, gap; text_attrs hold solver, termination and
  // message, number_attrs hold `values` and total_seconds. The CLI writes it
  // into the output file (e.g. /recon/history).
  Table history_table() const;
  // The last record, if any.
  std::optional<IterationRecord> last() const;
};

}  // namespace recofold
