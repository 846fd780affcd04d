// SPDX-License-Identifier: Apache-2.0
// Study folder safety: one run per folder (lock, stale locks taken over), corrupt
// manifests named, cases with failed outputs run again, failed counts over all runs,
// a merged folder resumable.
#include <algorithm>
#include <gtest/gtest.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdlib>
#include <string>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/study/folder_lock.h"
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
  char tmpl[] = "/tmp/recofold-safety-XXXXXX";
  const char* d = ::mkdtemp(tmpl);
  EXPECT_NE(d, nullptr);
  return std::string(d) + "/" + name;
}

bool exists(const std::string& p) {
  struct stat st;
  return ::stat(p.c_str(), &st) == 0;
}

// 1 phantom x (1 MRI + 1 CT acquisition) x 2 methods; "bad-auto" fails on
// both modalities when it runs (the discrepancy rule needs the noise level;
// the data are noiseless), which the config cannot know at load time.
StudyConfig tiny() {
  const std::string text = R"(
name = "safety"
size = 32
seed = 3
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
name = "fista-wavelet"
method = "fista"
prior = "wavelet"
levels = 2
lambda = 0.01
iters = 5
[[method]]
name = "bad-auto"
method = "fista"
prior = "tv"
lambda = "auto"
lambda_rule = "discrepancy"
iters = 5
)";
  return StudyConfig::parse(text, "safety.toml", source_dir());
}

StudyRunOptions options(const std::string& dir) {
  StudyRunOptions o;
  o.out_dir = dir;
  o.jobs = 1;
  o.threads_per_job = 1;
  o.write_report = false;
  return o;
}

// The rows of a results file without their run times, in case order: rows are
// appended as cases finish, so a rerun case comes last.
std::string without_time(const std::string& path) {
  ResultsTable t = read_results(path);
  const int tc = t.column("time");
  for (auto& r : t.rows) r[size_t(tc)] = "";
  std::sort(t.rows.begin(), t.rows.end());
  return results_text(t);
}

TEST(StudyFolderLock, SecondHolderRefusedNamingTheFirstAndReleaseRemovesTheFile) {
  const std::string dir = temp_dir("lock");
  ASSERT_EQ(::mkdir(dir.c_str(), 0777), 0);
  const std::string path = dir + "/study.lock";
  {
    const StudyFolderLock lock(dir, "recofold study --out x");
    EXPECT_TRUE(exists(path));
    EXPECT_EQ(lock.path(), path);
    const std::string holder = StudyFolderLock::describe_holder(path);
    EXPECT_NE(holder.find("process " + std::to_string(::getpid())), std::string::npos) << holder;
    EXPECT_NE(holder.find("recofold study --out x"), std::string::npos) << holder;
    EXPECT_TRUE(StudyFolderLock::held_by_other(dir));
    try {
      const StudyFolderLock second(dir, "second");
      ADD_FAILURE() << "a held folder was locked twice";
    } catch (const InputError& e) {
      EXPECT_EQ(e.file(), path);
      EXPECT_NE(e.reason().find("process " + std::to_string(::getpid())), std::string::npos) << e.reason();
    }
    // Another process is refused too.
    const pid_t child = ::fork();
    ASSERT_GE(child, 0);
    if (child == 0) {
      try {
        const StudyFolderLock other(dir, "child");
        ::_exit(0);  // taken: wrong
      } catch (const InputError&) {
        ::_exit(3);
      } catch (...) {
        ::_exit(4);
      }
    }
    int status = 0;
    ::waitpid(child, &status, 0);
    ASSERT_TRUE(WIFEXITED(status));
    EXPECT_EQ(WEXITSTATUS(status), 3) << "another process took a held lock";
    EXPECT_EQ(StudyFolderLock::describe_holder(path), holder) << "a refused run leaves the holder's text alone";
  }
  EXPECT_FALSE(exists(path)) << "a released lock leaves no file";
  EXPECT_FALSE(StudyFolderLock::held_by_other(dir));
}

TEST(StudyFolderLock, LockOfAKilledProcessIsTakenOver) {
  const std::string dir = temp_dir("stale");
  ASSERT_EQ(::mkdir(dir.c_str(), 0777), 0);
  const pid_t child = ::fork();
  ASSERT_GE(child, 0);
  if (child == 0) {
    new StudyFolderLock(dir, "killed run");  // never released: the process dies holding it
    ::pause();
    ::_exit(0);
  }
  // Wait until the child holds the lock, then kill it the hard way.
  for (int i = 0; i < 500 && !StudyFolderLock::held_by_other(dir); ++i) ::usleep(10000);
  ASSERT_TRUE(StudyFolderLock::held_by_other(dir));
  ::kill(child, SIGKILL);
  int status = 0;
  ::waitpid(child, &status, 0);
  ASSERT_TRUE(exists(dir + "/study.lock")) << "the killed run's lock file stays behind";
  EXPECT_NE(StudyFolderLock::describe_holder(dir + "/study.lock").find("killed run"), std::string::npos);
  const StudyFolderLock lock(dir, "next run");
  EXPECT_NE(StudyFolderLock::describe_holder(dir + "/study.lock").find("next run"), std::string::npos);
}

TEST(StudyFolderSafety, RunIntoAHeldFolderIsRefusedBeforeWritingAnything) {
  const std::string dir = temp_dir("held");
  ASSERT_EQ(::mkdir(dir.c_str(), 0777), 0);
  const StudyFolderLock lock(dir, "first run");
  try {
    run_study(tiny(), options(dir));
    ADD_FAILURE() << "a second run into a held folder ran";
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), dir + "/study.lock");
    EXPECT_NE(e.reason().find("first run"), std::string::npos) << e.reason();
  }
  EXPECT_FALSE(exists(dir + "/results.csv"));
  EXPECT_FALSE(exists(dir + "/manifest.json"));
  // The holder itself runs the study with lock = false.
  StudyRunOptions o = options(dir);
  o.lock = false;
  EXPECT_TRUE(run_study(tiny(), o).complete);
}

TEST(StudyFolderSafety, CorruptManifestIsReportedAsCorrupt) {
  const std::string dir = temp_dir("corrupt");
  run_study(tiny(), options(dir));
  write_text_atomic(dir + "/manifest.json", "{\n  \"name\": \"saf");
  try {
    run_study(tiny(), options(dir));
    ADD_FAILURE() << "a corrupt manifest was accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), dir + "/manifest.json");
    EXPECT_NE(e.reason().find("corrupt"), std::string::npos) << e.reason();
  }
  EXPECT_FALSE(exists(dir + "/study.lock")) << "a refused run releases the folder";
}

TEST(StudyFolderSafety, CasesWithFailedOutputsRunAgainAndFailedCountsCoverEarlierRuns) {
  const std::string full = temp_dir("full"), resumed = temp_dir("resumed");
  const StudyRunSummary first = run_study(tiny(), options(full));
  ASSERT_TRUE(first.complete);
  EXPECT_EQ(first.cases_failed, 2);
  EXPECT_EQ(first.cases_failed_all, 2);
  // The same folder as if the disk had filled while writing the first case's
  // montage image: its row records an output failure.
  ResultsTable t = read_results(full + "/results.csv");
  ASSERT_EQ(t.rows.size(), 4u);
  ASSERT_TRUE(t.cell(0, "error").empty());
  ::mkdir(resumed.c_str(), 0777);
  write_text_atomic(resumed + "/manifest.json", read_text_file(full + "/manifest.json"));
  ResultsTable hurt = t;
  const int ke = hurt.column("error"), kp = hurt.column("psnr");
  hurt.rows[0][size_t(ke)] = output_failure("writing the montage image: No space left on device");
  hurt.rows[0][size_t(kp)] = "";
  write_text_atomic(resumed + "/results.csv", results_text(hurt));
  const StudyRunSummary s = run_study(tiny(), options(resumed));
  EXPECT_TRUE(s.complete);
  EXPECT_EQ(s.cases_retried, 1);
  EXPECT_EQ(s.cases_run, 1);
  EXPECT_EQ(s.cases_skipped, 3);
  EXPECT_EQ(s.cases_failed, 0) << "the rerun case succeeds";
  EXPECT_EQ(s.cases_failed_all, 2) << "the input failures of the earlier run still count";
  EXPECT_EQ(without_time(resumed + "/results.csv"), without_time(full + "/results.csv"));
  // Input failures are final: a further run runs nothing.
  const StudyRunSummary again = run_study(tiny(), options(resumed));
  EXPECT_EQ(again.cases_run, 0);
  EXPECT_EQ(again.cases_retried, 0);
  EXPECT_EQ(again.cases_failed_all, 2);
}

TEST(StudyFolderSafety, MergedFolderCanBeResumedAsTheWholeStudy) {
  const std::string a = temp_dir("a"), b = temp_dir("b"), merged = temp_dir("merged");
  StudyRunOptions oa = options(a), ob = options(b);
  oa.shard = Shard::parse("1/2");
  ob.shard = Shard::parse("2/2");
  run_study(tiny(), oa);
  run_study(tiny(), ob);
  merge_studies({a, b}, merged, "test");
  EXPECT_FALSE(exists(merged + "/study.lock"));
  const StudyRunSummary s = run_study(tiny(), options(merged));
  EXPECT_TRUE(s.complete);
  EXPECT_EQ(s.cases_run, 0);
  EXPECT_EQ(s.cases_skipped, 4);
  // A shard still being run is not merged.
  const StudyFolderLock busy(b, "shard 2 still running");
  try {
    merge_studies({a, b}, temp_dir("early"), "test");
    ADD_FAILURE() << "a shard in use was merged";
  } catch (const InputError& e) {
    EXPECT_NE(e.reason().find("shard 2 still running"), std::string::npos) << e.reason();
  }
}

}  // namespace
}  // namespace recofold
