// SPDX-License-Identifier: Apache-2.0
// Tests of lambda sweeps (warm starts, curve, scores) and the discrepancy-principle choice of lambda.
#include <gtest/gtest.h>

#include <cmath>
#include <memory>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/ops/dense_operator.h"
#include "recofold/priors/tv.h"
#include "recofold/priors/wavelet_l1.h"
#include "recofold/recon/fista.h"
#include "recofold/recon/lambda_discrepancy.h"
#include "recofold/recon/lambda_sweep.h"

namespace recofold {
namespace {

const Shape kShape{16, 16};

struct Problem {
  std::shared_ptr<DenseOperator> a;
  VecC truth, y;
  double sigma;
};

// 160 complex Gaussian measurements of a blocky 16x16 image with complex noise
// of standard deviation sigma per real and imaginary part.
Problem make_problem(double sigma) {
  Problem p;
  p.sigma = sigma;
  Rng rng(31);
  const Index m = 160;
  Eigen::MatrixXcf mat(m, 256);
  const double s = 1.0 / std::sqrt(double(m));
  for (Index j = 0; j < 256; ++j)
    for (Index i = 0; i < m; ++i) mat(i, j) = cfloat(float(s * rng.normal()), float(s * rng.normal()));
  p.a = std::make_shared<DenseOperator>(mat, kShape, Shape{m});
  p.truth = VecC::Zero(256);
  for (Index r = 0; r < 16; ++r)
    for (Index c = 0; c < 16; ++c) {
      float v = 0.1f;
      if (r >= 3 && r < 12 && c >= 2 && c < 9) v = 1.0f;
      if (r >= 5 && r < 14 && c >= 10 && c < 15) v = 0.5f;
      p.truth[r * 16 + c] = cfloat(v, 0.f);
    }
  p.a->apply(p.truth, p.y);
  for (Index i = 0; i < m; ++i) p.y[i] += cfloat(float(sigma * rng.normal()), float(sigma * rng.normal()));
  return p;
}

RegularisedSolve fista_solver(const Problem& p, int iterations) {
  return [&p, iterations](const Prior& prior, VecC& x) {
    FistaOptions o;
    o.max_iterations = iterations;
    o.relative_tolerance = 1e-5;
    return solve_fista(o, *p.a, prior, p.y, x);
  };
}

TEST(LambdaSweep, ReturnsCurveWithMonotoneMisfitAndInteriorBestScore) {
  const Problem p = make_problem(0.05);
  TvPrior prior(kShape, 1.0);
  const std::vector<double> lambdas = geometric_lambdas(2.0, 0.4, 8);
  auto score = [&p](const VecC& x) { return -std::sqrt(norm_squared(x - p.truth)); };
  LambdaSweepOptions o;
  o.keep_images = true;
  const LambdaCurve curve = sweep_lambda(o, *p.a, p.y, prior, lambdas, fista_solver(p, 300), VecC(), score);
  ASSERT_EQ(curve.points.size(), lambdas.size());
  ASSERT_EQ(curve.images.size(), lambdas.size());
  for (size_t i = 1; i < curve.points.size(); ++i) {
    EXPECT_EQ(curve.points[i].lambda, lambdas[i]);
    EXPECT_LT(curve.points[i].residual_squared, curve.points[i - 1].residual_squared * (1 + 1e-3)) << i;
  }
  EXPECT_GT(curve.best, 0);
  EXPECT_LT(curve.best, static_cast<int>(lambdas.size()) - 1);
  const Table t = curve.table();
  EXPECT_EQ(t.rows.shape, (Shape{8, 6}));
  EXPECT_EQ(t.columns[2], "residual_squared");
}

TEST(LambdaSweep, WarmStartsSaveIterations) {
  const Problem p = make_problem(0.05);
  WaveletL1Options wo;
  wo.family = WaveletFamily::kDb1;
  wo.levels = 2;
  WaveletL1Prior prior(kShape, 1.0, wo);
  const std::vector<double> lambdas = geometric_lambdas(0.5, 0.7, 8);
  LambdaSweepOptions warm, cold;
  cold.warm_start = false;
  int warm_its = 0, cold_its = 0;
  for (const LambdaPoint& pt : sweep_lambda(warm, *p.a, p.y, prior, lambdas, fista_solver(p, 2000)).points)
    warm_its += pt.iterations;
  for (const LambdaPoint& pt : sweep_lambda(cold, *p.a, p.y, prior, lambdas, fista_solver(p, 2000)).points)
    cold_its += pt.iterations;
  EXPECT_LT(warm_its, cold_its);
  RecordProperty("warm_iterations", warm_its);
  RecordProperty("cold_iterations", cold_its);
}

TEST(LambdaSweep, RejectsNegativeLambda) {
  const Problem p = make_problem(0.05);
  TvPrior prior(kShape, 1.0);
  try {
    sweep_lambda(LambdaSweepOptions{}, *p.a, p.y, prior, {0.1, -0.2}, fista_solver(p, 10));
    FAIL() << "accepted a negative lambda";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "sweep.lambdas");
  }
}

TEST(DiscrepancyTarget, IsMTimesNoiseVariance) {
  EXPECT_DOUBLE_EQ(discrepancy_target(100, 0.1, true), 2.0);
  EXPECT_DOUBLE_EQ(discrepancy_target(100, 0.1, false), 1.0);
  EXPECT_DOUBLE_EQ(discrepancy_target(100, 0.1, false, 1.5), 1.5);
}

TEST(LambdaDiscrepancy, ChoosesLambdaWhoseMisfitMatchesNoiseEnergy) {
  const Problem p = make_problem(0.05);
  TvPrior prior(kShape, 1.0);
  DiscrepancyOptions o;
  o.noise_sigma = p.sigma;
  VecC x;
  const DiscrepancyChoice c = choose_lambda_discrepancy(o, *p.a, p.y, prior, fista_solver(p, 500), x);
  EXPECT_TRUE(c.bracketed) << c.rule;
  EXPECT_NEAR(c.target, 160 * 2 * 0.05 * 0.05, 1e-12);
  EXPECT_NEAR(c.residual_squared / c.target, 1.0, 0.1) << c.rule;
  EXPECT_NE(c.rule.find("discrepancy principle"), std::string::npos);
  // The returned image is the one at the chosen lambda.
  VecC r;
  p.a->apply(x, r);
  EXPECT_NEAR(norm_squared(r - p.y), c.residual_squared, 1e-6 * c.residual_squared);
  // And it is a sensible reconstruction: much closer to the truth than a nearly unregularised one.
  TvPrior weak(kShape, c.lambda * 1e-3);
  VecC x_weak;
  fista_solver(p, 500)(weak, x_weak);
  EXPECT_LT(norm_squared(x - p.truth), 0.5 * norm_squared(x_weak - p.truth));
  RecordProperty("rule", c.rule);
}

TEST(LambdaDiscrepancy, SearchesUpwardWhenStartIsTooSmall) {
  const Problem p = make_problem(0.05);
  TvPrior prior(kShape, 1.0);
  DiscrepancyOptions o;
  o.noise_sigma = p.sigma;
  o.lambda_start = 1e-4;
  o.ratio = 0.3;
  o.max_steps = 12;
  VecC x;
  const DiscrepancyChoice c = choose_lambda_discrepancy(o, *p.a, p.y, prior, fista_solver(p, 500), x);
  EXPECT_TRUE(c.bracketed) << c.rule;
  EXPECT_GT(c.lambda, 1e-4);
  EXPECT_NEAR(c.residual_squared / c.target, 1.0, 0.15) << c.rule;
}

TEST(LambdaDiscrepancy, ValidationNamesBadFields) {
  DiscrepancyOptions o;  // noise_sigma = 0
  o.ratio = 1.5;
  const auto e = o.validate();
  ASSERT_EQ(e.size(), 2u);
  EXPECT_EQ(e[0].rfind("discrepancy.noise_sigma", 0), 0u) << e[0];
  EXPECT_EQ(e[1].rfind("discrepancy.ratio", 0), 0u) << e[1];
}

}  // namespace
}  // namespace recofold
