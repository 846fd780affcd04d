// SPDX-License-Identifier: Apache-2.0
// Progress estimates with an injected clock: none before steady work, within 2x of the truth from 10 %, one final line.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <sstream>
#include <string>
#include <vector>

#include "recofold/core/progress.h"
#include "recofold/core/rng.h"

namespace recofold {
namespace {

size_t count_of(const std::string& text, const std::string& word) {
  size_t n = 0;
  for (size_t at = text.find(word); at != std::string::npos; at = text.find(word, at + 1)) ++n;
  return n;
}

// A job of `steps` steps whose first step costs `first_seconds` (planning,
// loading) and whose others cost `step_seconds` times a factor drawn
// uniformly from [1 - jitter, 1 + jitter]. Checks every estimate the
// reporter makes against the true time left.
struct Job {
  int steps = 100;
  double first_seconds = 0.0;
  double step_seconds = 0.05;
  double jitter = 0.0;
  uint64_t seed = 1;
};

struct Outcome {
  std::vector<double> estimates;  // seconds_left after each update (NaN: none)
  std::vector<double> truth;      // true seconds left after each update
  std::string text;
};

Outcome run(const Job& job, ProgressMode mode = ProgressMode::kLines) {
  Rng rng(job.seed);
  std::vector<double> cost(static_cast<size_t>(job.steps));
  for (int k = 0; k < job.steps; ++k)
    cost[size_t(k)] = k == 0 ? job.first_seconds + job.step_seconds
                             : job.step_seconds * (1.0 + job.jitter * (2.0 * rng.uniform() - 1.0));
  std::ostringstream os;
  double t = 0.0;
  StreamProgress p(os, "job", mode, 0.0, [&t] { return t; });
  Outcome o;
  double remaining = 0.0;
  for (double c : cost) remaining += c;
  for (int k = 1; k <= job.steps; ++k) {
    t += cost[size_t(k - 1)];
    remaining -= cost[size_t(k - 1)];
    p.update(k, job.steps, "obj 1");
    o.estimates.push_back(p.seconds_left(k, job.steps));
    o.truth.push_back(remaining);
  }
  p.finish("converged");
  p.finish("converged");  // a second finish (solver, then caller) must not print again
  o.text = os.str();
  return o;
}

TEST(StreamProgress, NoEstimateBeforeThreeStepsOrOneSecondOfSteadyWork) {
  Job job;
  job.first_seconds = 3.0;  // a slow first step (FFTW planning) must not set the rate
  const Outcome o = run(job);
  // Updates 1..3: the baseline and 2 steady steps of 0.05 s: no estimate.
  for (int k = 0; k < 3; ++k) EXPECT_TRUE(std::isnan(o.estimates[size_t(k)])) << "update " << k + 1;
  EXPECT_FALSE(std::isnan(o.estimates[3]));  // 3 steady steps
  // The first printed lines carry no "left".
  const std::string first_line = o.text.substr(0, o.text.find('\n'));
  EXPECT_EQ(first_line.find("left"), std::string::npos) << first_line;

  // Slow steps: one steady step of 1.5 s is enough.
  Job slow;
  slow.steps = 10;
  slow.step_seconds = 1.5;
  const Outcome s = run(slow);
  EXPECT_TRUE(std::isnan(s.estimates[0]));
  EXPECT_FALSE(std::isnan(s.estimates[1]));
}

TEST(StreamProgress, EstimateWithinFactorTwoOnceTenPercentIsDone) {
  // Slow first steps, jittered steps, and both together.
  std::vector<Job> jobs(4);
  jobs[0].first_seconds = 5.0;   // 100x a step
  jobs[1].jitter = 0.6;
  jobs[2].first_seconds = 2.0;
  jobs[2].jitter = 0.9;
  jobs[2].steps = 400;
  jobs[3].steps = 30;
  jobs[3].first_seconds = 0.5;
  jobs[3].jitter = 0.5;
  for (size_t j = 0; j < jobs.size(); ++j) {
    const Outcome o = run(jobs[j]);
    // From 10 % done (and no earlier than the 4th update, when 3 steady steps exist).
    const int from = std::max((jobs[j].steps + 9) / 10, 4);
    for (int k = from; k < jobs[j].steps - 1; ++k) {
      const double e = o.estimates[size_t(k - 1)], truth = o.truth[size_t(k - 1)];
      ASSERT_FALSE(std::isnan(e)) << "job " << j << " update " << k;
      EXPECT_LE(e, 2.0 * truth) << "job " << j << " update " << k;
      EXPECT_GE(e, 0.5 * truth) << "job " << j << " update " << k;
    }
  }
}

TEST(StreamProgress, FinalLinePrintedOnce) {
  for (ProgressMode mode : {ProgressMode::kLines, ProgressMode::kBar}) {
    Job job;
    job.steps = 20;
    const Outcome o = run(job, mode);
    EXPECT_EQ(count_of(o.text, "done in"), 1u) << o.text;
    EXPECT_EQ(count_of(o.text, "20/20"), 1u) << o.text;  // the last step appears once, in the final line
    EXPECT_NE(o.text.find("job: 20/20 done in"), std::string::npos) << o.text;
  }
  // A sink reused for a second run reports that run's final line too.
  std::ostringstream os;
  double t = 0.0;
  StreamProgress p(os, "solve", ProgressMode::kLines, 0.0, [&t] { return t; });
  for (int run_no = 0; run_no < 2; ++run_no) {
    for (int k = 1; k <= 5; ++k) {
      t += 1.0;
      p.update(k, 5, "");
    }
    p.finish("ok");
  }
  EXPECT_EQ(count_of(os.str(), "done in 5s"), 2u) << os.str();
  // Quiet prints nothing.
  const Outcome q = run(Job{}, ProgressMode::kQuiet);
  EXPECT_TRUE(q.text.empty());
}

}  // namespace
}  // namespace recofold
