// SPDX-License-Identifier: Apache-2.0
// comparisons.csv of a study: paired differences between methods per condition, with t intervals and Wilcoxon p-values.
//
// Per condition (summary.h) and metric, methods are paired case by case
// (same object and repetition, so the same truth; the pair is dropped when
// either case failed) and the difference d = a - b is summarised by its
// mean, Student's t 95 % interval and the two-sided Wilcoxon signed-rank
// p-value (study/statistics.h, reproducing scipy.stats.wilcoxon's defaults):
//   kind "best"            method_a = the best method of the condition for
//                          that metric (highest mean PSNR/SSIM, lowest
//                          NRMSE/HFEN) among the rows that do not use the
//                          truth (oracle rows are compared with it but never
//                          named best unless every row is oracle),
//                          method_b = each other method;
//   kind "learned"         method_a = a learned method, method_b = the best
//                          classical (not learned, not oracle) method.
// Columns: condition, kind, method_a, lambda_rule_a, method_b, lambda_rule_b,
// metric, n, mean_diff, ci95_low, ci95_high, p_value, test. Oracle rules
// read "oracle (uses the ground truth)". Blank interval for n < 2, blank
// p-value for n = 0.
#pragma once

#include <string>
#include <vector>

#include "recofold/study/statistics.h"
#include "recofold/study/summary.h"

namespace recofold {

struct ComparisonRow {
  std::string condition, kind;
  const SummaryRow* a = nullptr;
  const SummaryRow* b = nullptr;
  std::string metric;
  PairedComparison result;
  // The difference is significant when its 95 % interval excludes 0.
  bool significant() const;
};

// Rows in condition order (first appearance in `summary`), then metric
// order of `metrics`. The pointers point into `summary`.
std::vector<ComparisonRow> compare_methods(const std::vector<SummaryRow>& summary,
                                           const std::vector<std::string>& metrics);
std::string comparisons_csv(const std::vector<ComparisonRow>& rows);

// Paired values of two summary rows for a metric (pairs present in both).
void paired_values(const SummaryRow& a, const SummaryRow& b, size_t metric, std::vector<double>* va,
                   std::vector<double>* vb);

// The best row of a condition for a metric among `rows` (summary.h's
// direction); classical_only skips learned rows; oracle rows count only
// when nothing else is there. Null when no row has a value.
const SummaryRow* best_row(const std::vector<const SummaryRow*>& rows, const std::string& metric, bool classical_only);

}  // namespace recofold
