// SPDX-License-Identifier: Apache-2.0
// Pooling results.csv rows into mean +- std per method and condition.
#include "recofold/study/summary.h"

#include <cmath>
#include <cstdlib>
#include <limits>
#include <map>

#include "recofold/study/case_grid.h"
#include "recofold/study/study_config.h"
#include "study_util.h"

namespace recofold {

std::string SummaryRow::condition() const {
  std::string s = modality;
  const auto& names = acquisition_axes();
  for (size_t i = 0; i < names.size(); ++i)
    if (!axes[i].empty()) s += " " + names[i] + "=" + axes[i];
  return s;
}

std::vector<SummaryRow> summarize(const ResultsTable& t) {
  std::vector<SummaryRow> rows;
  std::map<std::string, size_t> index;
  std::vector<std::vector<std::vector<double>>> values;  // row -> metric -> samples
  std::vector<std::vector<double>> times;
  const auto& metrics = study_metric_names();
  for (size_t r = 0; r < t.rows.size(); ++r) {
    SummaryRow key;
    key.modality = t.cell(r, "modality");
    key.method = t.cell(r, "method");
    key.prior = t.cell(r, "prior");
    for (const auto& a : acquisition_axes()) key.axes.push_back(t.cell(r, a));
    std::string id = key.modality + "|" + key.method + "|" + key.prior;
    for (const auto& a : key.axes) id += "|" + a;
    auto it = index.find(id);
    if (it == index.end()) {
      it = index.emplace(id, rows.size()).first;
      rows.push_back(key);
      values.emplace_back(metrics.size());
      times.emplace_back();
    }
    SummaryRow& row = rows[it->second];
    ++row.n;
    const std::string& inside = t.cell(r, "in_training_conditions");
    if (!inside.empty()) {
      if (row.in_training.empty()) row.in_training = inside;
      else if (row.in_training != inside) row.in_training = "partly";
    }
    if (!t.cell(r, "error").empty()) {
      ++row.failed;
      continue;
    }
    for (size_t m = 0; m < metrics.size(); ++m)
      values[it->second][m].push_back(std::strtod(t.cell(r, metrics[m]).c_str(), nullptr));
    times[it->second].push_back(std::strtod(t.cell(r, "time").c_str(), nullptr));
  }
  const double nan = std::numeric_limits<double>::quiet_NaN();
  for (size_t i = 0; i < rows.size(); ++i) {
    for (size_t m = 0; m < metrics.size(); ++m) {
      const auto& v = values[i][m];
      if (v.empty()) {
        rows[i].mean.push_back(nan);
        rows[i].std_dev.push_back(nan);
        continue;
      }
      double sum = 0.0;
      for (double x : v) sum += x;
      const double mean = sum / double(v.size());
      double ss = 0.0;
      for (double x : v) ss += (x - mean) * (x - mean);
      rows[i].mean.push_back(mean);
      rows[i].std_dev.push_back(v.size() > 1 ? std::sqrt(ss / double(v.size() - 1)) : 0.0);
    }
    double ts = 0.0;
    for (double x : times[i]) ts += x;
    rows[i].time_mean = times[i].empty() ? nan : ts / double(times[i].size());
  }
  return rows;
}

std::string summary_csv(const std::vector<SummaryRow>& rows) {
  std::string s = "modality,method,prior";
  for (const auto& a : acquisition_axes()) s += "," + a;
  s += ",in_training_conditions,n,failed";
  for (const auto& m : study_metric_names()) s += "," + m + "_mean," + m + "_std";
  s += ",time_mean\n";
  for (const SummaryRow& r : rows) {
    s += csv_field(r.modality) + "," + csv_field(r.method) + "," + csv_field(r.prior);
    for (const auto& a : r.axes) s += "," + csv_field(a);
    s += "," + r.in_training + "," + std::to_string(r.n) + "," + std::to_string(r.failed);
    for (size_t m = 0; m < r.mean.size(); ++m) s += "," + format_sig(r.mean[m], 6) + "," + format_sig(r.std_dev[m], 4);
    s += "," + format_sig(r.time_mean, 4) + "\n";
  }
  return s;
}

}  // namespace recofold
