// SPDX-License-Identifier: Apache-2.0
// summary.csv of a study: mean and standard deviation of every metric per method and condition.
//
// A condition is modality + acquisition axes; rows of results.csv with the
// same method, prior and condition are pooled over phantoms and repetitions.
// Columns: modality, method, prior, pattern, accel, coils, noise, views, arc,
// photons, in_training_conditions, n, failed, then <metric>_mean and
// <metric>_std for psnr, ssim, nrmse, hfen, then time_mean. The standard
// deviation is the sample one (n - 1), 0 for a single case; failed cases are
// counted but not averaged.
#pragma once

#include <string>
#include <vector>

#include "recofold/study/results_table.h"

namespace recofold {

struct SummaryRow {
  std::string modality, method, prior, in_training;
  std::vector<std::string> axes;      // values of acquisition_axes()
  int n = 0, failed = 0;
  std::vector<double> mean, std_dev;  // per study_metric_names(); NaN when no successful case
  double time_mean = 0.0;
  std::string condition() const;      // "mri R4 c1 s0.01 lines-vd" style label
};

// Rows in first-appearance order of results.
std::vector<SummaryRow> summarize(const ResultsTable& results);
std::string summary_csv(const std::vector<SummaryRow>& rows);

}  // namespace recofold
