// SPDX-License-Identifier: Apache-2.0
// Pooling results.csv rows into n, mean, std and t interval per method and condition.
#include "recofold/study/summary.h"

#include <cmath>
#include <cstdlib>
#include <limits>
#include <map>

#include "recofold/study/case_grid.h"
#include "recofold/study/statistics.h"
#include "recofold/study/study_config.h"
#include "study_util.h"

namespace recofold {

const char* const kOracleMark = "oracle (uses the ground truth)";

bool higher_is_better(const std::string& metric) { return metric == "psnr" || metric == "ssim"; }

std::string SummaryRow::label() const { return oracle() ? method + " [" + kOracleMark + "]" : method; }

std::string SummaryRow::condition() const {
  std::string s = object_set.empty() ? modality : object_set + " " + modality;
  const auto& names = acquisition_axes();
  for (size_t i = 0; i < names.size(); ++i)
    if (!axes[i].empty()) s += " " + names[i] + "=" + axes[i];
  return s;
}

std::string SummaryRow::condition_id() const {
  std::string s = object_set + "|" + modality;
  for (const auto& a : axes) s += "|" + a;
  return s;
}

std::vector<SummaryRow> summarize(const ResultsTable& t) {
  std::vector<SummaryRow> rows;
  std::map<std::string, size_t> index;
  std::vector<std::vector<double>> times;
  const auto& metrics = study_metric_names();
  for (size_t r = 0; r < t.rows.size(); ++r) {
    SummaryRow key;
    key.object_set = t.cell(r, "object_set");
    key.modality = t.cell(r, "modality");
    key.method = t.cell(r, "method");
    key.prior = t.cell(r, "prior");
    key.lambda_rule = t.cell(r, "lambda_rule");
    for (const auto& a : acquisition_axes()) key.axes.push_back(t.cell(r, a));
    const std::string id = key.condition_id() + "|" + key.method + "|" + key.prior;
    auto it = index.find(id);
    if (it == index.end()) {
      it = index.emplace(id, rows.size()).first;
      key.samples.resize(metrics.size());
      rows.push_back(key);
      times.emplace_back();
    }
    SummaryRow& row = rows[it->second];
    const std::string& inside = t.cell(r, "in_training_conditions");
    if (!inside.empty()) {
      if (row.in_training.empty()) row.in_training = inside;
      else if (row.in_training != inside) row.in_training = "partly";
    }
    if (!t.cell(r, "error").empty()) {
      ++row.failed;
      continue;
    }
    ++row.n;
    row.sample_keys.push_back(t.cell(r, "phantom") + "|" + t.cell(r, "repetition"));
    for (size_t m = 0; m < metrics.size(); ++m)
      row.samples[m].push_back(std::strtod(t.cell(r, metrics[m]).c_str(), nullptr));
    times[it->second].push_back(std::strtod(t.cell(r, "time").c_str(), nullptr));
  }
  const double nan = std::numeric_limits<double>::quiet_NaN();
  for (size_t i = 0; i < rows.size(); ++i) {
    for (size_t m = 0; m < metrics.size(); ++m) {
      const SampleSummary s = summarize_sample(rows[i].samples[m]);
      rows[i].mean.push_back(s.n == 0 ? nan : s.mean);
      rows[i].std_dev.push_back(s.n == 0 ? nan : s.std_dev);
      rows[i].ci_low.push_back(s.n < 2 ? nan : s.ci_low);
      rows[i].ci_high.push_back(s.n < 2 ? nan : s.ci_high);
    }
    double ts = 0.0;
    for (double x : times[i]) ts += x;
    rows[i].time_mean = times[i].empty() ? nan : ts / double(times[i].size());
  }
  return rows;
}

namespace {
std::string num(double v, int digits) { return std::isnan(v) ? "" : format_sig(v, digits); }
}  // namespace

std::string summary_csv(const std::vector<SummaryRow>& rows) {
  std::string s = "object_set,modality,method,prior,lambda_rule";
  for (const auto& a : acquisition_axes()) s += "," + a;
  s += ",in_training_conditions,n,failed";
  for (const auto& m : study_metric_names())
    s += "," + m + "_mean," + m + "_std," + m + "_ci95_low," + m + "_ci95_high";
  s += ",time_mean\n";
  for (const SummaryRow& r : rows) {
    s += csv_field(r.object_set) + "," + csv_field(r.modality) + "," + csv_field(r.method) + "," +
         csv_field(r.prior) + "," + csv_field(r.oracle() ? std::string(kOracleMark) : r.lambda_rule);
    for (const auto& a : r.axes) s += "," + csv_field(a);
    s += "," + r.in_training + "," + std::to_string(r.n) + "," + std::to_string(r.failed);
    for (size_t m = 0; m < r.mean.size(); ++m)
      s += "," + num(r.mean[m], 6) + "," + num(r.std_dev[m], 4) + "," + num(r.ci_low[m], 6) + "," +
           num(r.ci_high[m], 6);
    s += "," + num(r.time_mean, 4) + "\n";
  }
  return s;
}

}  // namespace recofold
