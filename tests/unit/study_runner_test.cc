// SPDX-License-Identifier: Apache-2.0
// Study runner: every case once, failing cases recorded, resume after a cut-off row, merge equals unsharded.
#include <gtest/gtest.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cstdlib>
#include <fstream>
#include <set>
#include <string>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/provenance.h"
#include "recofold/io/image_file.h"
#include "recofold/io/measurement_file.h"
#include "recofold/recon/reconstruct.h"
#include "recofold/study/results_table.h"
#include "recofold/study/study_config.h"
#include "recofold/study/study_runner.h"

namespace recofold {
namespace {

std::string source_dir() {
  const char* s = std::getenv("RECOFOLD_SOURCE_DIR");
  return s ? s : ".";
}

std::string temp_dir(const std::string& name) {
  char tmpl[] = "/tmp/recofold-study-XXXXXX";
  const char* d = ::mkdtemp(tmpl);
  EXPECT_NE(d, nullptr);
  return std::string(d) + "/" + name;
}

// 1 phantom x (1 MRI + 1 CT acquisition) x methods; "bad-auto" fails on both
// modalities when it runs (the discrepancy rule needs the noise level; the
// data are noiseless), which the config cannot know at load time.
std::string tiny_config(int seed) {
  return R"(
name = "tiny"
size = 32
seed = )" + std::to_string(seed) + R"(
[[phantom]]
family = "ellipses"
count = 1
[mri]
accel = 2
noise = 0
[ct]
views = 16
photons = 0
[[method]]
method = "zero-filled"
[[method]]
method = "fbp"
[[method]]
name = "fista-wavelet"
method = "fista"
prior = "wavelet"
levels = 2
lambda = [0.001, 0.01]
iters = 5
[[method]]
name = "bad-auto"
method = "fista"
prior = "tv"
lambda = "auto"
lambda_rule = "discrepancy"
iters = 5
)";
}

StudyConfig tiny(int seed = 1) { return StudyConfig::parse(tiny_config(seed), "tiny.toml", source_dir()); }

StudyRunOptions options(const std::string& dir) {
  StudyRunOptions o;
  o.out_dir = dir;
  o.jobs = 2;
  o.threads_per_job = 1;
  return o;
}

// results.csv without the time column (the only column that differs between runs).
std::string without_time(const std::string& path) {
  ResultsTable t = read_results(path);
  const int tc = t.column("time");
  for (auto& r : t.rows) r[size_t(tc)] = "";
  return results_text(t);
}

TEST(StudyRunner, RunsEveryCaseOnceAndRecordsFailingCases) {
  const std::string dir = temp_dir("run");
  const StudyConfig c = tiny();
  const StudyRunSummary s = run_study(c, options(dir));
  EXPECT_TRUE(s.complete);
  EXPECT_EQ(s.cases_total, 6);  // MRI: zero-filled, fista, bad; CT: fbp, fista, bad
  EXPECT_EQ(s.cases_run, 6);
  EXPECT_EQ(s.cases_failed, 2);
  const ResultsTable t = read_results(dir + "/results.csv");
  ASSERT_EQ(t.rows.size(), 6u);
  for (size_t r = 0; r < t.rows.size(); ++r) {
    const bool bad = t.cell(r, "method") == "bad-auto";
    EXPECT_EQ(t.cell(r, "error").empty(), !bad) << t.cell(r, "case") << ": " << t.cell(r, "error");
    EXPECT_EQ(t.cell(r, "psnr").empty(), bad);
    if (!bad) {
      EXPECT_GT(std::strtod(t.cell(r, "psnr").c_str(), nullptr), 10.0) << t.cell(r, "case");
    }
  }
  EXPECT_EQ(t.cell(1, "method"), "fista-wavelet");
  EXPECT_FALSE(t.cell(1, "lambda").empty()) << "an oracle list records the weight it kept";
  EXPECT_TRUE(file_exists(dir + "/summary.csv"));
  const std::string html = read_text_file(dir + "/report.html");
  EXPECT_NE(html.find(kResearchUseLine), std::string::npos);
  EXPECT_NE(html.find("data:image/png;base64,"), std::string::npos);

  // A rerun finds every case done.
  const StudyRunSummary again = run_study(c, options(dir));
  EXPECT_EQ(again.cases_skipped, 6);
  EXPECT_EQ(again.cases_run, 0);
}

TEST(StudyRunner, ResumeAfterCutOffRowEqualsUninterruptedRun) {
  const std::string full = temp_dir("full"), cut = temp_dir("cut");
  run_study(tiny(), options(full));
  // Simulate a kill: results.csv with the header, two whole rows and half a row.
  const std::string text = read_text_file(full + "/results.csv");
  size_t pos = 0;
  for (int line = 0; line < 3; ++line) pos = text.find('\n', pos) + 1;
  ::mkdir(cut.c_str(), 0777);
  write_text_atomic(cut + "/results.csv", text.substr(0, pos + 20));
  const StudyRunSummary s = run_study(tiny(), options(cut));
  EXPECT_EQ(s.cases_skipped, 2);
  EXPECT_EQ(s.cases_run, 4);
  EXPECT_EQ(without_time(cut + "/results.csv"), without_time(full + "/results.csv"));
}

TEST(StudyRunner, RefusesFolderOfAnotherConfig) {
  const std::string dir = temp_dir("other");
  StudyRunOptions o = options(dir);
  o.write_report = false;
  run_study(tiny(1), o);
  try {
    run_study(tiny(2), o);
    ADD_FAILURE() << "a folder of another config was accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "config_hash");
  }
}

TEST(StudyMerge, ShardsMergeToTheUnshardedResultAndMismatchesAreRefused) {
  const std::string whole = temp_dir("whole"), a = temp_dir("a"), b = temp_dir("b"), merged = temp_dir("merged");
  run_study(tiny(), options(whole));
  StudyRunOptions oa = options(a), ob = options(b);
  oa.shard = Shard::parse("1/2");
  ob.shard = Shard::parse("2/2");
  const StudyRunSummary sa = run_study(tiny(), oa), sb = run_study(tiny(), ob);
  EXPECT_EQ(sa.cases_in_shard + sb.cases_in_shard, 6);
  EXPECT_GT(sa.cases_in_shard, 0);
  EXPECT_GT(sb.cases_in_shard, 0);
  const StudyRunSummary m = merge_studies({a, b}, merged, "test");
  EXPECT_TRUE(m.complete);
  EXPECT_EQ(without_time(merged + "/results.csv"), without_time(whole + "/results.csv"));
  EXPECT_TRUE(file_exists(merged + "/report.html"));

  // Overlapping shards.
  try {
    merge_studies({a, a}, temp_dir("overlap"), "test");
    ADD_FAILURE() << "overlapping shards were merged";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "case");
  }
  // A shard of another config.
  const std::string other = temp_dir("other");
  StudyRunOptions oo = options(other);
  oo.shard = Shard::parse("2/2");
  oo.write_report = false;
  run_study(tiny(5), oo);
  const std::string refused = temp_dir("refused");
  try {
    merge_studies({a, other}, refused, "test");
    ADD_FAILURE() << "shards of different configs were merged";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "config_hash");
  }
  struct stat st;
  EXPECT_NE(::stat(refused.c_str(), &st), 0) << "nothing is written when a merge is refused";
}

}  // namespace
}  // namespace recofold

namespace recofold {
namespace {

// keep = "all" on the image problems: every case's measurement and image are
// kept and named in results.csv, and reconstructing the kept measurement with
// the method's spec (the call `recofold recon` makes) gives the kept image bit
// for bit: one reconstruction path.
TEST(StudyRunner, KeepAllKeepsMeasurementsAndImagesThatRecon) {
  const std::string text = R"(
keep = "all"
size = 32
[[phantom]]
family = "ellipses"
count = 1
[denoise]
noise = 0.05
[inpaint]
keep = [0.4, 0.8]
noise = 0.01
[[method]]
method = "zero-filled"
[[method]]
name = "fista-tv"
method = "fista"
prior = "tv"
lambda = 0.01
iters = 5
)";
  const StudyConfig c = StudyConfig::parse(text, "keep.toml", source_dir());
  const std::string dir = temp_dir("keep");
  const StudyRunSummary s = run_study(c, options(dir));
  ASSERT_TRUE(s.complete);
  EXPECT_EQ(s.cases_failed, 0);
  const ResultsTable t = read_results(dir + "/results.csv");
  ASSERT_EQ(t.rows.size(), 6u);
  std::set<std::string> measurements;
  for (size_t r = 0; r < t.rows.size(); ++r) {
    const std::string mf = t.cell(r, "measurement_file"), imf = t.cell(r, "image_file");
    ASSERT_FALSE(mf.empty() || imf.empty()) << t.cell(r, "case");
    measurements.insert(mf);
    const Measurement m = read_measurement_file(dir + "/" + mf);
    EXPECT_EQ(std::string(to_string(m.modality)), t.cell(r, "modality"));
    const ImageRecord kept = read_image_file(dir + "/" + imf);
    const StudyMethod& method = t.cell(r, "method") == "zero-filled" ? c.methods[0] : c.methods[1];
    const Reconstruction again = reconstruct(m, method.spec);
    ASSERT_EQ(kept.pixels.data.size(), size_t(again.image.size()));
    size_t differ = 0;
    for (size_t k = 0; k < kept.pixels.data.size(); ++k)
      differ += kept.pixels.data[k].real() != again.image.data()[k].real() ? 1 : 0;
    EXPECT_EQ(differ, 0u) << t.cell(r, "case") << ": the kept image is not what reconstruct() gives";
  }
  EXPECT_EQ(measurements.size(), 3u) << "one measurement per acquisition, shared by its methods";
}

}  // namespace
}  // namespace recofold
