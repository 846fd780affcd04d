// SPDX-License-Identifier: Apache-2.0
// summary.csv of a study: n, mean, standard deviation and 95 % confidence interval of every metric per method and condition.
//
// A condition is object set (a phantom table, or a phantom family) +
// modality + acquisition axes; rows of results.csv with the same method,
// prior and condition are pooled over the objects of the set and the
// repetitions. Columns: object_set, modality, method, prior, lambda_rule,
// pattern, accel, coils, noise, views, arc, photons, in_training_conditions,
// n, failed, then <metric>_mean, <metric>_std, <metric>_ci95_low,
// <metric>_ci95_high for psnr, ssim, nrmse, hfen, then time_mean. n counts
// the successful cases (the ones averaged); failed cases are counted apart.
// The standard deviation is the sample one (n - 1), 0 for a single case; the
// interval is Student's t interval of the mean (study/statistics.h), blank
// for n < 2.
#pragma once

#include <string>
#include <vector>

#include "recofold/study/results_table.h"

namespace recofold {

struct SummaryRow {
  std::string object_set, modality, method, prior, lambda_rule, in_training;
  std::vector<std::string> axes;      // values of acquisition_axes()
  int n = 0, failed = 0;              // n: successful cases
  std::vector<double> mean, std_dev;  // per study_metric_names(); NaN when no successful case
  std::vector<double> ci_low, ci_high;
  double time_mean = 0.0;
  // The successful cases: pairing key "phantom|repetition" and, per metric,
  // the values in the same order (comparisons pair methods by the key).
  std::vector<std::string> sample_keys;
  std::vector<std::vector<double>> samples;
  bool oracle() const { return lambda_rule == "oracle"; }
  bool learned() const { return lambda_rule == "learned"; }
  // Method label with the oracle mark: "fista-wavelet [oracle (uses the ground truth)]".
  std::string label() const;
  std::string condition() const;      // "textured mri accel=4 coils=1 ..." style label
  std::string condition_id() const;   // same condition <=> same id
};

// The mark every table, figure and finding puts on oracle rows.
extern const char* const kOracleMark;  // "oracle (uses the ground truth)"

// Rows in first-appearance order of results.
std::vector<SummaryRow> summarize(const ResultsTable& results);
std::string summary_csv(const std::vector<SummaryRow>& rows);

// Metric direction: true for psnr and ssim (higher is better), false for nrmse and hfen.
bool higher_is_better(const std::string& metric);

}  // namespace recofold
