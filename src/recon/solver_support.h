// SPDX-License-Identifier: Apache-2.0
// Private helpers shared by the iterative solvers (argument checks, timing, records, progress).
#pragma once

#include <chrono>
#include <cmath>
#include <cstdint>
#include <string>
#include <vector>

#include "recofold/core/progress.h"
#include "recofold/ops/linear_operator.h"
#include "recofold/priors/prior.h"
#include "recofold/recon/solver_summary.h"

namespace recofold {
namespace internal {

// Checks y against A's range and sizes x to A's domain (zeros when empty).
// Throws InputError naming `solver` when a size is wrong.
void prepare_solve(const std::string& solver, const LinearOperator& a, const VecC& y, VecC& x);

// ||a - b|| / max(||a||, tiny), accumulated in double without temporaries.
double relative_change(const VecC& now, const VecC& before);

// ||a - b||^2 in double, without a temporary vector.
double squared_distance(const VecC& a, const VecC& b);

// Re <a - b, c - d> in double, without temporaries.
double real_dot_of_differences(const VecC& a, const VecC& b, const VecC& c, const VecC& d);

// r = A x - y.
void data_residual(const LinearOperator& a, const VecC& x, const VecC& y, VecC& r);

// z = x - step * A^H r (the gradient step of 1/2||Ax - y||^2 given r = Ax - y);
// `g` holds A^H r (a work vector the caller keeps, so repeated calls do not allocate).
void gradient_step_from_residual(const LinearOperator& a, const VecC& r, const VecC& x, double step, VecC& z, VecC& g);

// Room for the per-iteration records of a solve (records are pushed inside
// the loop; reserving keeps the loop free of allocations).
void reserve_records(SolverSummary& summary, int max_iterations);

// Wall-clock stopwatch for per-iteration records.
class Stopwatch {
 public:
  Stopwatch() : start_(std::chrono::steady_clock::now()) {}
  double lap() {
    const auto now = std::chrono::steady_clock::now();
    const double s = std::chrono::duration<double>(now - start_).count();
    start_ = now;
    return s;
  }

 private:
  std::chrono::steady_clock::time_point start_;
};

// Sends "obj 1.234e+01" (or the relative change) to the sink, when there is
// one (through a reused per-thread string: no allocation per call).
void report_progress(ProgressSink* progress, int done, int total, const IterationRecord& rec);

// Fills termination/message/total time at the end of a solve.
void finish_summary(SolverSummary& summary, Termination t, const std::string& message, double total_seconds,
                    ProgressSink* progress);

inline bool finite(double v) { return std::isfinite(v); }

// Option checks shared by ISTA and FISTA ("ista.max_iterations = 0; must be >= 1", ...).
std::vector<std::string> validate_proximal_gradient(const std::string& solver, int max_iterations, double step_size,
                                                    int power_iterations, double relative_tolerance);

// The proximal-gradient step: `step_size` when > 0, else 1/(1.05 L) with
// L = ||A||^2 from a power iteration. Records "lipschitz" (when estimated) and
// "step_size" in summary.values.
double proximal_gradient_step(const LinearOperator& a, double step_size, int power_iterations, uint64_t power_seed,
                              SolverSummary& summary);

// A prior split for the splitting solvers: the analysis-form part (null when
// there is none, e.g. ZeroPrior) and the box of a ConstrainedPrior (null when none).
struct PriorParts {
  const Prior* analysis = nullptr;
  const Box* box = nullptr;
  bool supported = true;  // false: the (inner) prior is neither analysis-form nor ZeroPrior
};
PriorParts split_prior(const Prior& prior);

}  // namespace internal
}  // namespace recofold
