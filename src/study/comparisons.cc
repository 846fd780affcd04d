// SPDX-License-Identifier: Apache-2.0
// Paired method comparisons per condition (comparisons.h).
#include "recofold/study/comparisons.h"

#include <algorithm>
#include <cmath>
#include <map>

#include "recofold/study/study_config.h"
#include "study_util.h"

namespace recofold {

namespace {

size_t metric_slot(const std::string& m) {
  const auto& names = study_metric_names();
  return size_t(std::find(names.begin(), names.end(), m) - names.begin());
}

std::string num(double v, int digits) { return std::isnan(v) ? "" : format_sig(v, digits); }

std::string rule_text(const SummaryRow& r) { return r.oracle() ? std::string(kOracleMark) : r.lambda_rule; }

}  // namespace

bool ComparisonRow::significant() const {
  return result.n >= 2 && !std::isnan(result.ci_low) && (result.ci_low > 0.0 || result.ci_high < 0.0);
}

void paired_values(const SummaryRow& a, const SummaryRow& b, size_t metric, std::vector<double>* va,
                   std::vector<double>* vb) {
  va->clear();
  vb->clear();
  std::map<std::string, size_t> in_b;
  for (size_t i = 0; i < b.sample_keys.size(); ++i) in_b[b.sample_keys[i]] = i;
  for (size_t i = 0; i < a.sample_keys.size(); ++i) {
    const auto it = in_b.find(a.sample_keys[i]);
    if (it == in_b.end()) continue;
    va->push_back(a.samples[metric][i]);
    vb->push_back(b.samples[metric][it->second]);
  }
}

const SummaryRow* best_row(const std::vector<const SummaryRow*>& rows, const std::string& metric, bool classical_only) {
  const size_t k = metric_slot(metric);
  const bool up = higher_is_better(metric);
  for (const bool allow_oracle : {false, true}) {
    const SummaryRow* best = nullptr;
    for (const SummaryRow* r : rows) {
      if (classical_only && r->learned()) continue;
      if (!allow_oracle && r->oracle()) continue;
      if (k >= r->mean.size() || std::isnan(r->mean[k])) continue;
      if (best == nullptr || (up ? r->mean[k] > best->mean[k] : r->mean[k] < best->mean[k])) best = r;
    }
    if (best != nullptr) return best;
  }
  return nullptr;
}

std::vector<ComparisonRow> compare_methods(const std::vector<SummaryRow>& summary,
                                           const std::vector<std::string>& metrics) {
  std::vector<std::string> order;
  std::map<std::string, std::vector<const SummaryRow*>> groups;
  for (const SummaryRow& r : summary) {
    auto& g = groups[r.condition_id()];
    if (g.empty()) order.push_back(r.condition_id());
    g.push_back(&r);
  }
  std::vector<ComparisonRow> out;
  std::vector<double> va, vb;
  for (const std::string& id : order) {
    const auto& rows = groups[id];
    for (const std::string& metric : metrics) {
      const size_t k = metric_slot(metric);
      auto add = [&](const char* kind, const SummaryRow* a, const SummaryRow* b) {
        ComparisonRow c;
        c.condition = a->condition();
        c.kind = kind;
        c.a = a;
        c.b = b;
        c.metric = metric;
        paired_values(*a, *b, k, &va, &vb);
        c.result = compare_paired(va, vb);
        out.push_back(std::move(c));
      };
      const SummaryRow* best = best_row(rows, metric, false);
      if (best == nullptr) continue;
      for (const SummaryRow* r : rows)
        if (r != best) add("best", best, r);
      const SummaryRow* classical = best_row(rows, metric, true);
      if (classical == nullptr) continue;
      for (const SummaryRow* r : rows)
        if (r->learned()) add("learned", r, classical);
    }
  }
  return out;
}

std::string comparisons_csv(const std::vector<ComparisonRow>& rows) {
  std::string s =
      "condition,kind,method_a,lambda_rule_a,method_b,lambda_rule_b,metric,n,mean_diff,ci95_low,ci95_high,p_value,"
      "test\n";
  for (const ComparisonRow& c : rows) {
    const PairedComparison& r = c.result;
    s += csv_field(c.condition) + "," + c.kind + "," + csv_field(c.a->method) + "," + csv_field(rule_text(*c.a)) + "," +
         csv_field(c.b->method) + "," + csv_field(rule_text(*c.b)) + "," + c.metric + "," + std::to_string(r.n) + "," +
         num(r.n > 0 ? r.mean_diff : NAN, 8) + "," + num(r.n >= 2 ? r.ci_low : NAN, 8) + "," +
         num(r.n >= 2 ? r.ci_high : NAN, 8) + "," + num(r.n > 0 ? r.p_value : NAN, 8) + "," + r.test + "\n";
  }
  return s;
}

}  // namespace recofold
