// SPDX-License-Identifier: Apache-2.0
// summary.csv intervals and comparisons.csv on a hand-built results table: pairing, best choice, oracle marks.
#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "recofold/study/comparisons.h"
#include "recofold/study/results_table.h"
#include "recofold/study/statistics.h"
#include "recofold/study/summary.h"

namespace recofold {
namespace {

// Eight repetitions of one MRI condition on one object set; PSNR values per
// method are chosen by hand (the other metrics follow from them).
ResultsTable table() {
  ResultsTable t;
  t.columns = result_columns();
  const double zf[8] = {20.1, 19.7, 20.4, 20.0, 19.9, 20.3, 19.8, 20.2};
  const double tv[8] = {24.0, 23.1, 24.6, 23.9, 23.5, 24.4, 23.0, 24.2};
  const double orc[8] = {25.0, 24.1, 25.6, 24.9, 24.5, 25.4, 24.0, 25.2};
  struct M {
    const char* name;
    const char* prior;
    const char* rule;
    const double* psnr;
  } methods[] = {{"zero-filled", "none", "none", zf},
                 {"admm-tv", "tv", "auto", tv},
                 {"admm-tv-again", "tv", "auto", tv},
                 {"fista-oracle", "wavelet", "oracle", orc}};
  for (const M& m : methods)
    for (int r = 0; r < 8; ++r) {
      std::vector<std::string> row(t.columns.size());
      auto set = [&](const std::string& col, const std::string& v) { row[size_t(t.column(col))] = v; };
      set("case", std::string("ellipses-1-") + std::to_string(r % 2) + "|" + m.name + "|r" + std::to_string(r));
      set("phantom", "ellipses-1-" + std::to_string(r % 2));
      set("object_set", "ellipses");
      set("modality", "mri");
      set("method", m.name);
      set("prior", m.prior);
      set("pattern", "lines-vd");
      set("accel", "4");
      set("coils", "1");
      set("noise", "0.01");
      set("repetition", std::to_string(r / 2));
      set("lambda_rule", m.rule);
      set("psnr", std::to_string(m.psnr[r]));
      set("ssim", std::to_string(m.psnr[r] / 30.0));
      set("nrmse", std::to_string(std::pow(10.0, -m.psnr[r] / 20.0)));
      set("hfen", std::to_string(std::pow(10.0, -m.psnr[r] / 20.0)));
      set("time", "0.1");
      set("iterations", "10");
      t.rows.push_back(row);
    }
  return t;
}

TEST(StudySummary, GivesNMeanStdAndTIntervalPerMethodAndCondition) {
  const std::vector<SummaryRow> rows = summarize(table());
  ASSERT_EQ(rows.size(), 4u);
  const SummaryRow& zf = rows[0];
  EXPECT_EQ(zf.method, "zero-filled");
  EXPECT_EQ(zf.n, 8);
  EXPECT_EQ(zf.object_set, "ellipses");
  // t interval by hand: mean 20.05, s = 0.2449..., t_{0.975,7} = 2.364624...
  const double mean = 20.05, s = std::sqrt(0.42 / 7.0), half = 2.3646242515927849 * s / std::sqrt(8.0);
  EXPECT_NEAR(zf.mean[0], mean, 1e-12);
  EXPECT_NEAR(zf.std_dev[0], s, 1e-12);
  EXPECT_NEAR(zf.ci_low[0], mean - half, 1e-9);
  EXPECT_NEAR(zf.ci_high[0], mean + half, 1e-9);
  const std::string csv = summary_csv(rows);
  EXPECT_NE(csv.find("psnr_mean,psnr_std,psnr_ci95_low,psnr_ci95_high"), std::string::npos);
  EXPECT_NE(csv.find("hfen_ci95_high"), std::string::npos);
  EXPECT_NE(csv.find(std::string("fista-oracle,wavelet,") + kOracleMark), std::string::npos) << csv;
}

TEST(StudyComparisons, BestIsNeverAnOracleRowAndPairsByObjectAndRepetition) {
  const std::vector<SummaryRow> rows = summarize(table());
  const std::vector<ComparisonRow> cmp = compare_methods(rows, {"psnr", "nrmse"});
  int found = 0;
  for (const ComparisonRow& c : cmp) {
    if (c.kind != "best") continue;
    // The oracle row has the highest PSNR but uses the truth: the best is admm-tv.
    EXPECT_EQ(c.a->method, "admm-tv") << c.metric;
    if (c.metric != "psnr") continue;
    if (c.b->method == "zero-filled") {
      ++found;
      EXPECT_EQ(c.result.n, 8);
      EXPECT_NEAR(c.result.mean_diff, 23.8375 - 20.05, 1e-9);
      EXPECT_GT(c.result.ci_low, 0.0) << "TV vs zero-filled: the interval excludes 0";
      EXPECT_TRUE(c.significant());
      EXPECT_NEAR(c.result.p_value, 2.0 / 256.0, 1e-12) << "exact Wilcoxon, all 8 differences positive";
    } else if (c.b->method == "admm-tv-again") {
      ++found;
      EXPECT_EQ(c.result.p_value, 1.0) << "a method against itself";
      EXPECT_LE(c.result.ci_low, 0.0);
      EXPECT_GE(c.result.ci_high, 0.0);
      EXPECT_FALSE(c.significant());
    } else if (c.b->method == "fista-oracle") {
      ++found;
      EXPECT_NEAR(c.result.mean_diff, -1.0, 1e-9);
    }
  }
  EXPECT_EQ(found, 3);
  const std::string csv = comparisons_csv(cmp);
  EXPECT_EQ(csv.substr(0, csv.find('\n')),
            "condition,kind,method_a,lambda_rule_a,method_b,lambda_rule_b,metric,n,mean_diff,ci95_low,ci95_high,"
            "p_value,test");
  EXPECT_NE(csv.find(std::string("fista-oracle,") + kOracleMark), std::string::npos);
}

TEST(StudyComparisons, LowerIsBetterForNrmse) {
  const std::vector<SummaryRow> rows = summarize(table());
  std::vector<const SummaryRow*> ptr;
  for (const SummaryRow& r : rows) ptr.push_back(&r);
  EXPECT_EQ(best_row(ptr, "nrmse", false)->method, "admm-tv");
  // Only oracle rows: the oracle one is then named.
  EXPECT_EQ(best_row({ptr[3]}, "psnr", false)->method, "fista-oracle");
}

}  // namespace
}  // namespace recofold
