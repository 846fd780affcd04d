// SPDX-License-Identifier: Apache-2.0
// Lambda sweeps with warm starts.
#include "recofold/recon/lambda_sweep.h"

#include <cmath>
#include <cstdio>
#include <limits>

#include "recofold/core/error.h"
#include "solver_support.h"

namespace recofold {

Table LambdaCurve::table() const {
  Table t;
  t.columns = {"lambda", "objective", "residual_squared", "score", "iterations", "seconds"};
  t.rows = NdArray<double>(Shape{static_cast<Index>(points.size()), static_cast<Index>(t.columns.size())});
  for (size_t i = 0; i < points.size(); ++i) {
    const LambdaPoint& p = points[i];
    double* row = t.rows.ptr() + i * t.columns.size();
    row[0] = p.lambda;
    row[1] = p.objective;
    row[2] = p.residual_squared;
    row[3] = p.score;
    row[4] = p.iterations;
    row[5] = p.seconds;
  }
  t.number_attrs["best_index"] = best;
  return t;
}

std::vector<double> geometric_lambdas(double start, double ratio, int count) {
  std::vector<double> l;
  double v = start;
  for (int i = 0; i < count; ++i, v *= ratio) l.push_back(v);
  return l;
}

LambdaCurve sweep_lambda(const LambdaSweepOptions& options, const LinearOperator& a, const VecC& y,
                         const Prior& prior, const std::vector<double>& lambdas, const RegularisedSolve& solve,
                         const VecC& x0, const ImageScore& score, ProgressSink* progress) {
  for (size_t i = 0; i < lambdas.size(); ++i)
    if (!(lambdas[i] >= 0.0) || !std::isfinite(lambdas[i]))
      throw InputError("", "sweep.lambdas",
                       "entry " + std::to_string(i) + " = " + std::to_string(lambdas[i]) + "; must be finite and >= 0");
  LambdaCurve curve;
  std::unique_ptr<Prior> p = prior.clone();
  VecC x = x0, r;
  const double nan = std::numeric_limits<double>::quiet_NaN();
  for (size_t i = 0; i < lambdas.size(); ++i) {
    internal::Stopwatch watch;
    if (!options.warm_start) x = x0;
    p->set_weight(lambdas[i]);
    const SolverSummary s = solve(*p, x);
    LambdaPoint pt;
    pt.lambda = lambdas[i];
    pt.objective = s.iterations.empty() ? nan : s.iterations.back().objective;
    internal::data_residual(a, x, y, r);
    pt.residual_squared = norm_squared(r);
    pt.score = score ? score(x) : nan;
    pt.iterations = static_cast<int>(s.iterations.size());
    pt.termination = s.termination;
    pt.seconds = watch.lap();
    curve.points.push_back(pt);
    if (options.keep_images) curve.images.push_back(x);
    if (score && std::isfinite(pt.score)) {
      const int b = curve.best;
      const bool better = b < 0 || (options.higher_score_is_better ? pt.score > curve.points[size_t(b)].score
                                                                   : pt.score < curve.points[size_t(b)].score);
      if (better) curve.best = static_cast<int>(i);
    }
    if (progress) {
      char buf[96];
      std::snprintf(buf, sizeof buf, "lambda %.3g residual^2 %.4g", pt.lambda, pt.residual_squared);
      progress->update(static_cast<int64_t>(i + 1), static_cast<int64_t>(lambdas.size()), buf);
    }
  }
  return curve;
}

}  // namespace recofold
