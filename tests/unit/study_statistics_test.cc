// SPDX-License-Identifier: Apache-2.0
// Tests of study statistics: t intervals, Student's t, Wilcoxon signed-rank (scipy's documented example), paired comparisons.
#include <gtest/gtest.h>

#include <cmath>

#include "recofold/study/statistics.h"

namespace recofold {
namespace {

TEST(StudyStatistics, TQuantilesMatchTablesAndInvertTheCdf) {
  // Two-sided 95 % critical values of Student's t (standard tables: 12.706,
  // 4.303, 2.571, 2.262, 1.960 for infinite dof).
  EXPECT_NEAR(student_t_quantile(0.975, 1), 12.706, 5e-4);
  EXPECT_NEAR(student_t_quantile(0.975, 2), 4.303, 5e-4);
  EXPECT_NEAR(student_t_quantile(0.975, 5), 2.571, 5e-4);
  EXPECT_NEAR(student_t_quantile(0.975, 9), 2.262, 5e-4);
  EXPECT_NEAR(student_t_quantile(0.975, 1e7), 1.960, 5e-4);
  for (double dof : {1.0, 3.0, 7.0, 30.0})
    for (double p : {0.01, 0.3, 0.8, 0.999}) EXPECT_NEAR(student_t_cdf(student_t_quantile(p, dof), dof), p, 1e-14);
  EXPECT_EQ(student_t_cdf(0.0, 4.0), 0.5);
  EXPECT_NEAR(student_t_cdf(1.0, 1.0), 0.75, 1e-15);  // Cauchy: 1/2 + atan(1)/pi
}

TEST(StudyStatistics, SampleSummaryGivesMeanStdAndTInterval) {
  const SampleSummary s = summarize_sample({1.0, 2.0, 3.0, 4.0, NAN});
  EXPECT_EQ(s.n, 4);
  EXPECT_DOUBLE_EQ(s.mean, 2.5);
  EXPECT_DOUBLE_EQ(s.std_dev, std::sqrt(5.0 / 3.0));
  const double half = student_t_quantile(0.975, 3) * s.std_dev / 2.0;
  EXPECT_DOUBLE_EQ(s.ci_low, 2.5 - half);
  EXPECT_DOUBLE_EQ(s.ci_high, 2.5 + half);
  const SampleSummary one = summarize_sample({7.0});
  EXPECT_EQ(one.n, 1);
  EXPECT_EQ(one.std_dev, 0.0);
  EXPECT_TRUE(std::isnan(one.ci_low));
  const SampleSummary flat = summarize_sample({3.0, 3.0, 3.0});
  EXPECT_EQ(flat.ci_low, 3.0);
  EXPECT_EQ(flat.ci_high, 3.0);
}

TEST(StudyStatistics, WilcoxonReproducesScipysDocumentedExample) {
  // scipy.stats.wilcoxon docstring (Wilcoxon 1945's corn heights):
  // statistic 24, exact two-sided p 0.041259765625; the normal
  // approximation of the same data gives 0.04088813291185591.
  const std::vector<double> d = {6, 8, 14, 16, 23, 24, 28, 29, 41, -48, 49, 56, 60, -67, 75};
  const WilcoxonResult w = wilcoxon_signed_rank(d);
  EXPECT_EQ(w.method, "exact");
  EXPECT_EQ(w.statistic, 24.0);
  EXPECT_DOUBLE_EQ(w.p_value, 0.041259765625);
  // With a zero added the test switches to the normal approximation and drops the zero.
  std::vector<double> with_zero = d;
  with_zero.push_back(0.0);
  const WilcoxonResult z = wilcoxon_signed_rank(with_zero);
  EXPECT_EQ(z.method, "normal");
  EXPECT_EQ(z.n, 15);
  EXPECT_NEAR(z.p_value, 0.04088813291185591, 1e-14);
}

TEST(StudyStatistics, AllPositiveDifferencesGiveTheSmallestExactP) {
  // n = 8 all positive: P = 2 / 2^8.
  const WilcoxonResult w = wilcoxon_signed_rank({0.5, 1.1, 0.2, 0.9, 1.7, 0.3, 0.8, 1.2});
  EXPECT_DOUBLE_EQ(w.p_value, 2.0 / 256.0);
  EXPECT_EQ(w.statistic, 0.0);
}

TEST(StudyStatistics, MethodComparedWithItselfHasPOneAndIntervalContainingZero) {
  const std::vector<double> a = {30.1, 29.4, 31.2, 30.0, 28.7, 30.5, 29.9, 30.3};
  const PairedComparison c = compare_paired(a, a);
  EXPECT_EQ(c.n, 8);
  EXPECT_EQ(c.p_value, 1.0);
  EXPECT_EQ(c.test, "all-zero");
  EXPECT_LE(c.ci_low, 0.0);
  EXPECT_GE(c.ci_high, 0.0);
  EXPECT_EQ(c.mean_diff, 0.0);
}

TEST(StudyStatistics, ClearImprovementHasIntervalExcludingZero) {
  const std::vector<double> b = {24.0, 23.1, 25.2, 24.4, 23.8, 24.9, 23.5, 24.2};
  std::vector<double> a;
  const double gain[] = {3.1, 2.7, 3.4, 2.9, 3.3, 3.0, 2.6, 3.2};
  for (size_t i = 0; i < b.size(); ++i) a.push_back(b[i] + gain[i]);
  const PairedComparison c = compare_paired(a, b);
  EXPECT_GT(c.ci_low, 0.0);
  EXPECT_NEAR(c.mean_diff, 3.025, 1e-12);
  EXPECT_DOUBLE_EQ(c.p_value, 2.0 / 256.0);
  // Pairs with a missing value are dropped.
  std::vector<double> a2 = a;
  a2[3] = NAN;
  EXPECT_EQ(compare_paired(a2, b).n, 7);
}

}  // namespace
}  // namespace recofold
