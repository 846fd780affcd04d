// SPDX-License-Identifier: Apache-2.0
// Helper for tests/reference/study_statistics_scipy.py: runs the statistics of study/statistics.h on numbers from stdin.
//
// One request per input line, one answer line per request (%.17g):
//   tcdf T DOF               -> cdf
//   tq P DOF                 -> quantile
//   summary C X1 X2 ...      -> n mean std ci_low ci_high   (confidence C)
//   wilcoxon D1 D2 ...       -> statistic p_value method n
//   paired N A1..AN B1..BN   -> n mean_diff ci_low ci_high p_value test
#include <cstdio>
#include <cstdlib>
#include <iostream>
#include <sstream>
#include <string>
#include <vector>

#include "recofold/study/statistics.h"

int main() {
  using namespace recofold;
  std::string line;
  while (std::getline(std::cin, line)) {
    std::istringstream in(line);
    std::string cmd;
    in >> cmd;
    std::vector<double> v;
    std::string tok;
    while (in >> tok) v.push_back(std::strtod(tok.c_str(), nullptr));
    if (cmd == "tcdf" && v.size() == 2) {
      std::printf("%.17g\n", student_t_cdf(v[0], v[1]));
    } else if (cmd == "tq" && v.size() == 2) {
      std::printf("%.17g\n", student_t_quantile(v[0], v[1]));
    } else if (cmd == "summary" && !v.empty()) {
      const SampleSummary s = summarize_sample(std::vector<double>(v.begin() + 1, v.end()), v[0]);
      std::printf("%d %.17g %.17g %.17g %.17g\n", s.n, s.mean, s.std_dev, s.ci_low, s.ci_high);
    } else if (cmd == "wilcoxon") {
      const WilcoxonResult w = wilcoxon_signed_rank(v);
      std::printf("%.17g %.17g %s %d\n", w.statistic, w.p_value, w.method.empty() ? "-" : w.method.c_str(), w.n);
    } else if (cmd == "paired" && !v.empty() && v.size() == 1 + 2 * static_cast<size_t>(v[0])) {
      const size_t n = static_cast<size_t>(v[0]);
      const PairedComparison c = compare_paired(std::vector<double>(v.begin() + 1, v.begin() + 1 + n),
                                                std::vector<double>(v.begin() + 1 + n, v.end()));
      std::printf("%d %.17g %.17g %.17g %.17g %s\n", c.n, c.mean_diff, c.ci_low, c.ci_high, c.p_value,
                  c.test.empty() ? "-" : c.test.c_str());
    } else {
      std::fprintf(stderr, "study_statistics_tool: bad request: %s\n", line.c_str());
      return 2;
    }
  }
  return 0;
}
