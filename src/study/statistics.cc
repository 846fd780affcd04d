// SPDX-License-Identifier: Apache-2.0
// Statistics of study results: t intervals, Student's t, Wilcoxon signed-rank test (statistics.h).
#include "recofold/study/statistics.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>

#include "recofold/core/error.h"

namespace recofold {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// Continued fraction of the incomplete beta function (modified Lentz).
double beta_fraction(double a, double b, double x) {
  constexpr double kTiny = 1e-300, kEps = 1e-16;
  const double qab = a + b, qap = a + 1.0, qam = a - 1.0;
  double c = 1.0, d = 1.0 - qab * x / qap;
  if (std::abs(d) < kTiny) d = kTiny;
  d = 1.0 / d;
  double h = d;
  for (int m = 1; m <= 10000; ++m) {
    const double m2 = 2.0 * m;
    double aa = m * (b - m) * x / ((qam + m2) * (a + m2));
    d = 1.0 + aa * d;
    if (std::abs(d) < kTiny) d = kTiny;
    c = 1.0 + aa / c;
    if (std::abs(c) < kTiny) c = kTiny;
    d = 1.0 / d;
    h *= d * c;
    aa = -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2));
    d = 1.0 + aa * d;
    if (std::abs(d) < kTiny) d = kTiny;
    c = 1.0 + aa / c;
    if (std::abs(c) < kTiny) c = kTiny;
    d = 1.0 / d;
    const double del = d * c;
    h *= del;
    if (std::abs(del - 1.0) < kEps) break;
  }
  return h;
}

// Average ranks (1-based) of v, ties by exact equality (scipy.stats.rankdata "average").
std::vector<double> average_ranks(const std::vector<double>& v) {
  std::vector<size_t> order(v.size());
  std::iota(order.begin(), order.end(), size_t{0});
  std::stable_sort(order.begin(), order.end(), [&](size_t i, size_t j) { return v[i] < v[j]; });
  std::vector<double> r(v.size());
  for (size_t i = 0; i < order.size();) {
    size_t j = i;
    while (j + 1 < order.size() && v[order[j + 1]] == v[order[i]]) ++j;
    const double rank = 0.5 * (double(i + 1) + double(j + 1));
    for (size_t k = i; k <= j; ++k) r[order[k]] = rank;
    i = j + 1;
  }
  return r;
}

// Null distribution of r+ for n untied, non-zero differences: P[R = r],
// r = 0 .. n(n+1)/2, by the same recursion as scipy (_hypotests.py).
std::vector<double> signed_rank_pmf(int n) {
  std::vector<double> c(1, 1.0);
  for (int k = 1; k <= n; ++k) {
    std::vector<double> next(static_cast<size_t>(k * (k + 1) / 2 + 1), 0.0);
    const size_t m = c.size();
    for (size_t i = 0; i < m; ++i) next[i] = c[i] * 0.5;
    for (size_t i = 0; i < m; ++i) next[next.size() - m + i] += c[i] * 0.5;
    c.swap(next);
  }
  return c;
}

}  // namespace

double incomplete_beta(double a, double b, double x) {
  RECOFOLD_CHECK(a > 0.0 && b > 0.0 && x >= 0.0 && x <= 1.0) << "incomplete_beta(" << a << ", " << b << ", " << x << ")";
  if (x == 0.0 || x == 1.0) return x;
  const double front = std::exp(std::lgamma(a + b) - std::lgamma(a) - std::lgamma(b) + a * std::log(x) +
                                b * std::log1p(-x));
  if (x < (a + 1.0) / (a + b + 2.0)) return front * beta_fraction(a, b, x) / a;
  return 1.0 - front * beta_fraction(b, a, 1.0 - x) / b;
}

double student_t_cdf(double t, double dof) {
  RECOFOLD_CHECK(dof > 0.0) << "student_t_cdf dof " << dof;
  if (std::isnan(t)) return kNaN;
  if (std::isinf(t)) return t > 0 ? 1.0 : 0.0;
  const double x = dof / (dof + t * t);
  const double tail = 0.5 * incomplete_beta(0.5 * dof, 0.5, x);
  return t >= 0.0 ? 1.0 - tail : tail;
}

double student_t_quantile(double p, double dof) {
  RECOFOLD_CHECK(p > 0.0 && p < 1.0 && dof > 0.0) << "student_t_quantile(" << p << ", " << dof << ")";
  if (p == 0.5) return 0.0;
  if (p < 0.5) return -student_t_quantile(1.0 - p, dof);
  double lo = 0.0, hi = 1.0;
  while (student_t_cdf(hi, dof) < p) {
    lo = hi;
    hi *= 2.0;
    if (hi > 1e300) return std::numeric_limits<double>::infinity();
  }
  for (int it = 0; it < 400; ++it) {
    const double mid = 0.5 * (lo + hi);
    if (mid <= lo || mid >= hi) break;
    if (student_t_cdf(mid, dof) < p) lo = mid; else hi = mid;
  }
  return 0.5 * (lo + hi);
}

double normal_sf(double z) { return 0.5 * std::erfc(z / std::sqrt(2.0)); }

SampleSummary summarize_sample(const std::vector<double>& values, double confidence) {
  RECOFOLD_CHECK(confidence > 0.0 && confidence < 1.0) << "confidence " << confidence;
  std::vector<double> v;
  for (double x : values)
    if (std::isfinite(x)) v.push_back(x);
  SampleSummary s;
  s.n = static_cast<int>(v.size());
  if (v.empty()) {
    s.mean = s.std_dev = s.ci_low = s.ci_high = kNaN;
    return s;
  }
  double sum = 0.0;
  for (double x : v) sum += x;
  s.mean = sum / double(v.size());
  if (v.size() < 2) {
    s.std_dev = 0.0;
    s.ci_low = s.ci_high = kNaN;
    return s;
  }
  double ss = 0.0;
  for (double x : v) ss += (x - s.mean) * (x - s.mean);
  s.std_dev = std::sqrt(ss / double(v.size() - 1));
  const double half = student_t_quantile(0.5 * (1.0 + confidence), double(v.size() - 1)) * s.std_dev /
                      std::sqrt(double(v.size()));
  s.ci_low = s.mean - half;
  s.ci_high = s.mean + half;
  return s;
}

WilcoxonResult wilcoxon_signed_rank(const std::vector<double>& differences) {
  WilcoxonResult r;
  std::vector<double> d = differences;
  if (d.empty()) {
    r.p_value = kNaN;
    r.statistic = kNaN;
    return r;
  }
  const size_t zeros = static_cast<size_t>(std::count(d.begin(), d.end(), 0.0));
  const bool exact = d.size() <= 50 && zeros == 0;
  if (!exact) {
    if (zeros == d.size()) {
      r.method = "all-zero";
      r.statistic = 0.0;
      r.p_value = 1.0;
      r.n = 0;
      return r;
    }
    d.erase(std::remove(d.begin(), d.end(), 0.0), d.end());
  }
  const int n = static_cast<int>(d.size());
  std::vector<double> mag(d.size());
  for (size_t i = 0; i < d.size(); ++i) mag[i] = std::abs(d[i]);
  const std::vector<double> ranks = average_ranks(mag);
  double r_plus = 0.0, r_minus = 0.0;
  for (size_t i = 0; i < d.size(); ++i) {
    if (d[i] > 0) r_plus += ranks[i];
    if (d[i] < 0) r_minus += ranks[i];
  }
  r.statistic = std::min(r_plus, r_minus);
  r.n = n;
  if (exact) {
    r.method = "exact";
    const std::vector<double> pmf = signed_rank_pmf(n);
    const size_t rp = static_cast<size_t>(r_plus);  // truncated, as scipy does with ties
    if (rp == (pmf.size() - 1) / 2) {
      r.p_value = 1.0;
    } else {
      double less = 0.0, greater = 0.0;
      for (size_t i = 0; i <= rp; ++i) less += pmf[i];
      for (size_t i = rp; i < pmf.size(); ++i) greater += pmf[i];
      r.p_value = std::clamp(2.0 * std::min(less, greater), 0.0, 1.0);
    }
    return r;
  }
  r.method = "normal";
  const double nn = n;
  const double mean = nn * (nn + 1.0) * 0.25;
  double se = nn * (nn + 1.0) * (2.0 * nn + 1.0);
  std::vector<double> sorted = ranks;
  std::sort(sorted.begin(), sorted.end());
  for (size_t i = 0; i < sorted.size();) {
    size_t j = i;
    while (j + 1 < sorted.size() && sorted[j + 1] == sorted[i]) ++j;
    const double t = double(j - i + 1);
    if (t > 1) se -= 0.5 * t * (t * t - 1.0);
    i = j + 1;
  }
  se = std::sqrt(se / 24.0);
  r.z = (r.statistic - mean) / se;
  r.p_value = 2.0 * normal_sf(std::abs(r.z));
  return r;
}

PairedComparison compare_paired(const std::vector<double>& a, const std::vector<double>& b, double confidence) {
  RECOFOLD_CHECK(a.size() == b.size()) << "compare_paired sizes " << a.size() << " and " << b.size();
  std::vector<double> d;
  for (size_t i = 0; i < a.size(); ++i)
    if (std::isfinite(a[i]) && std::isfinite(b[i])) d.push_back(a[i] - b[i]);
  PairedComparison c;
  const SampleSummary s = summarize_sample(d, confidence);
  c.n = s.n;
  c.mean_diff = s.mean;
  c.ci_low = s.ci_low;
  c.ci_high = s.ci_high;
  const WilcoxonResult w = wilcoxon_signed_rank(d);
  c.p_value = w.p_value;
  c.test = w.method;
  return c;
}

}  // namespace recofold
