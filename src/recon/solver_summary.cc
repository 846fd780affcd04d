// SPDX-License-Identifier: Apache-2.0
// SolverSummary reports and history table.
#include "recofold/recon/solver_summary.h"

#include <cmath>
#include <cstdio>

namespace recofold {

std::string_view to_string(Termination t) {
  switch (t) {
    case Termination::kConverged: return "converged";
    case Termination::kMaxIterations: return "max-iterations";
    case Termination::kDiverged: return "diverged";
    case Termination::kNonFinite: return "non-finite";
  }
  return "non-finite";
}

std::optional<IterationRecord> SolverSummary::last() const {
  if (iterations.empty()) return std::nullopt;
  return iterations.back();
}

bool SolverSummary::is_usable() const {
  if (termination != Termination::kConverged && termination != Termination::kMaxIterations) return false;
  if (iterations.empty()) return true;
  const double obj = iterations.back().objective;
  return std::isnan(obj) || std::isfinite(obj);  // NaN = not recorded
}

std::string SolverSummary::brief_report() const {
  char buf[160];
  std::string s = solver + ": " + std::string(to_string(termination)) + " after " +
                  std::to_string(iterations.size()) + " iterations";
  if (!message.empty()) s += " (" + message + ")";
  if (!iterations.empty() && std::isfinite(iterations.back().objective)) {
    std::snprintf(buf, sizeof buf, ", objective %.6g", iterations.back().objective);
    s += buf;
  }
  std::snprintf(buf, sizeof buf, ", %.3g s", total_seconds);
  return s + buf;
}

Table SolverSummary::history_table() const {
  Table t;
  t.columns = {"iteration", "objective", "data_residual", "relative_change", "seconds", "gap"};
  t.rows = NdArray<double>(Shape{static_cast<Index>(iterations.size()), static_cast<Index>(t.columns.size())});
  for (size_t i = 0; i < iterations.size(); ++i) {
    const IterationRecord& r = iterations[i];
    double* row = t.rows.ptr() + i * t.columns.size();
    row[0] = r.iteration;
    row[1] = r.objective;
    row[2] = r.data_residual;
    row[3] = r.relative_change;
    row[4] = r.seconds;
    row[5] = r.gap;
  }
  t.text_attrs["solver"] = solver;
  t.text_attrs["termination"] = std::string(to_string(termination));
  t.text_attrs["message"] = message;
  t.number_attrs = values;
  t.number_attrs["total_seconds"] = total_seconds;
  return t;
}

}  // namespace recofold
