// SPDX-License-Identifier: Apache-2.0
// The one-standard-error rule of the held-out-views lambda choice
// (lambda_held_out.h) on synthetic misfit curves whose standard error is known.
#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "recofold/recon/lambda_held_out.h"

namespace recofold {
namespace {

// n rays whose squared residuals alternate mean - d, mean + d: sum n mean,
// sample sd d sqrt(n / (n - 1)), so SE = sqrt(n) d sqrt(n / (n - 1)).
std::vector<double> rays(int n, double mean, double d) {
  std::vector<double> q(static_cast<size_t>(n));
  for (int i = 0; i < n; ++i) q[static_cast<size_t>(i)] = mean + (i % 2 ? d : -d);
  return q;
}

// One lambda's rays per misfit in `sums` (n rays each, spread d).
std::vector<std::vector<double>> curve(int n, const std::vector<double>& sums, double d) {
  std::vector<std::vector<double>> q;
  for (double s : sums) q.push_back(rays(n, s / n, d));
  return q;
}

TEST(LambdaHeldOut, StandardErrorOfTheSumOfSquaredResiduals) {
  const int n = 100;
  const double d = 0.3;
  EXPECT_NEAR(misfit_standard_error(rays(n, 1.0, d)), std::sqrt(double(n)) * d * std::sqrt(n / (n - 1.0)), 1e-12);
  EXPECT_EQ(misfit_standard_error({2.0}), 0.0);
  EXPECT_EQ(misfit_standard_error(std::vector<double>(10, 0.5)), 0.0);
}

TEST(LambdaHeldOut, LargestLambdaWithinOneStandardErrorOfTheMinimum) {
  // Misfits (sums) over lambdas 1, 2, 4, 8, 16: minimum 100 at lambda 2, SE
  // sqrt(100) * 0.5 * sqrt(100/99) ~ 5.03. Lambda 4 (104) lies within, 8 (110)
  // beyond: the choice is 4, interpolated in log lambda toward 8 to where the
  // curve crosses 100 + SE.
  const int n = 100;
  const std::vector<double> lambdas = {1, 2, 4, 8, 16};
  const OneStandardErrorChoice c = one_standard_error_choice(lambdas, curve(n, {103, 100, 104, 110, 130}, 0.5));
  const double se = std::sqrt(double(n)) * 0.5 * std::sqrt(n / (n - 1.0));
  EXPECT_EQ(c.smallest, 1);
  EXPECT_EQ(c.chosen, 2);
  EXPECT_EQ(c.beyond, 3);
  EXPECT_NEAR(c.standard_error, se, 1e-9);
  EXPECT_NEAR(c.threshold, 100 + se, 1e-9);
  const double t = (100 + se - 104) / (110 - 104.0);
  EXPECT_NEAR(c.lambda, std::exp(std::log(4.0) + t * std::log(2.0)), 1e-9);
  EXPECT_GT(c.lambda, 4.0);
  EXPECT_LT(c.lambda, 8.0);
}

TEST(LambdaHeldOut, ASmallStandardErrorKeepsTheMinimumAndOrderDoesNotMatter) {
  // The same curve with tiny per-ray spread: nothing else is within one SE, and
  // the lambdas may come in any order (the walk adds larger ones last).
  const int n = 100;
  const std::vector<double> lambdas = {4, 16, 1, 8, 2};
  const OneStandardErrorChoice c = one_standard_error_choice(lambdas, curve(n, {104, 130, 103, 110, 100}, 0.001));
  EXPECT_EQ(c.smallest, 4);
  EXPECT_EQ(c.chosen, 4);
  EXPECT_EQ(c.beyond, 0);  // lambda 4, the next larger one run
  EXPECT_NEAR(c.lambda, 2.0, 0.01);  // the crossing lies just above 2 (SE ~ 0.01 of a rise of 4)
}

TEST(LambdaHeldOut, NoLargerLambdaRunKeepsTheChosenGridValue) {
  const std::vector<double> lambdas = {1, 2};
  const OneStandardErrorChoice c = one_standard_error_choice(lambdas, curve(50, {55, 50}, 0.2));
  EXPECT_EQ(c.chosen, 1);
  EXPECT_EQ(c.beyond, -1);
  EXPECT_DOUBLE_EQ(c.lambda, 2.0);
}

}  // namespace
}  // namespace recofold
