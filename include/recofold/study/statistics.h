// SPDX-License-Identifier: Apache-2.0
// Statistics of study results: mean, standard deviation, t confidence intervals, paired comparisons, Wilcoxon test.
//
// Everything here works on the numbers as they are written to results.csv
// (parsed back to double), so an outside check on the same file gets the
// same answers.
//
// Confidence interval of a mean (Student's t, two-sided, level c):
//   mean +- t_{(1+c)/2, n-1} s / sqrt(n), s the sample standard deviation
//   (n - 1 in the denominator). Undefined (NaN) for n < 2; [mean, mean]
//   when s = 0.
// Student's t distribution: cdf through the regularised incomplete beta
// function I_x(a, b) (continued fraction, modified Lentz; from memory of
// the standard textbook treatment), quantile by bisection on the cdf to
// full double precision. Checked against scipy.stats.t in
// tests/reference/study_statistics_scipy.py.
//
// Wilcoxon signed-rank test (Wilcoxon, 1945), two-sided, on paired
// differences d = a - b, reproducing scipy.stats.wilcoxon(a, b) with its
// default options (zero_method "wilcox", correction False, method "auto"),
// as read in scipy 1.10's source (scipy/stats/_morestats.py):
//   - n = len(d) <= 50 and no zero difference: the exact null distribution
//     of the positive rank sum r+ (all 2^n sign patterns equally likely),
//     p = min(1, 2 min(P[R <= r+], P[R >= r+])), and p = 1 when r+ is the
//     centre of the distribution. Tied |d| get average ranks; scipy then
//     still uses the exact distribution with r+ truncated to an integer,
//     and so does this function;
//   - otherwise the normal approximation: zero differences are dropped
//     (n' non-zero left), T = min(r+, r-), z = (T - n'(n'+1)/4) / se,
//     se^2 = (n'(n'+1)(2n'+1) - sum_t t(t^2 - 1)/2) / 24 over groups of t
//     tied ranks, p = 2 (1 - Phi(|z|)), no continuity correction.
//   - every difference zero: scipy raises an error; here p = 1 (no
//     evidence of any difference), method "all-zero".
#pragma once

#include <string>
#include <vector>

namespace recofold {

// Summary of one sample.
struct SampleSummary {
  int n = 0;
  double mean = 0.0;      // NaN for n = 0
  double std_dev = 0.0;   // sample standard deviation (n - 1); 0 for n = 1, NaN for n = 0
  double ci_low = 0.0;    // t confidence interval of the mean; NaN for n < 2
  double ci_high = 0.0;
};

// Mean, standard deviation and t interval at `confidence` (0 < c < 1) of
// the finite values (NaN entries are skipped and not counted).
SampleSummary summarize_sample(const std::vector<double>& values, double confidence = 0.95);

// Student's t distribution with `dof` > 0 degrees of freedom.
double student_t_cdf(double t, double dof);
double student_t_quantile(double p, double dof);  // 0 < p < 1
// Standard normal upper tail 1 - Phi(z), = erfc(z / sqrt 2) / 2.
double normal_sf(double z);
// Regularised incomplete beta function I_x(a, b), a, b > 0, 0 <= x <= 1.
double incomplete_beta(double a, double b, double x);

struct WilcoxonResult {
  double statistic = 0.0;  // min(r+, r-) (scipy's two-sided statistic)
  double p_value = 1.0;
  std::string method;      // "exact", "normal" or "all-zero"; "" when n = 0 (p NaN)
  int n = 0;               // differences used (non-zero ones for "normal")
  double z = 0.0;          // "normal" only
};

// Two-sided Wilcoxon signed-rank test of the differences (header comment).
WilcoxonResult wilcoxon_signed_rank(const std::vector<double>& differences);

// Paired comparison of a against b (same length; pairs with a NaN on either
// side are dropped): mean of d = a - b with its t interval, and the
// Wilcoxon p-value.
struct PairedComparison {
  int n = 0;
  double mean_diff = 0.0, ci_low = 0.0, ci_high = 0.0;
  double p_value = 1.0;
  std::string test;  // WilcoxonResult::method
};
PairedComparison compare_paired(const std::vector<double>& a, const std::vector<double>& b,
                                double confidence = 0.95);

}  // namespace recofold
