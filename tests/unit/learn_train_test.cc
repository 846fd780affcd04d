// SPDX-License-Identifier: Apache-2.0
// Tests of the trainer: a short run learns, and an interrupted run resumed equals an uninterrupted one.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <string>
#include <unistd.h>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/learn/model.h"
#include "recofold/learn/trainer.h"
#include "recofold/ops/fft.h"

#include <omp.h>

namespace recofold {
namespace {

std::string temp_path(const std::string& name) {
  return "/tmp/recofold_learn_train_test_" + std::to_string(getpid()) + "_" + name;
}

TrainingConfig small_mri_config(int64_t steps) {
  const std::string text =
      "[data]\nmodality = \"mri\"\nsize = 32\nfamilies = \"textured\"\npatterns = \"lines-vd\"\n"
      "accel = 4.0\nnoise = 0.01\ncoils = 1\n"
      "[model]\niterations = 3\ndepth = 4\nwidth = 16\ndc = \"cg\"\ncg_iterations = 5\n"
      "[train]\nsteps = " + std::to_string(steps) + "\nbatch = 4\nlearning_rate = 3e-3\n"
      "validation_count = 8\nvalidation_every = 1000\ncheckpoint_every = 1000\nseed = 5\nthreads = 2\n";
  return TrainingConfig::parse(text, "small-mri.toml");
}

TEST(Trainer, ShortMriRunBeatsZeroFilledOnValidationSet) {
  TrainRun run;
  run.out = temp_path("learns.h5");
  TrainResult r = train_unrolled_model(small_mri_config(120), run);
  EXPECT_FALSE(r.interrupted);
  EXPECT_EQ(r.steps_done, 120);
  // The untrained model (zero residual branch) equals zero-filled, 22.7 dB on
  // this validation set; 120 small steps (~10 s) measured +3.3 dB. Data,
  // initialisation and threads are fixed, so the run is deterministic.
  EXPECT_GT(r.val_psnr_db, r.val_psnr_baseline_db + 2.5)
      << "val " << r.val_psnr_db << " dB, zero-filled " << r.val_psnr_baseline_db << " dB";
  UnrolledModel m = UnrolledModel::load(run.out);
  EXPECT_NEAR(m.info().metrics.at("val_psnr_db"), r.val_psnr_db, 1e-9);
  EXPECT_FALSE(file_exists(checkpoint_path(run.out)));
  std::remove(run.out.c_str());
}

// Training sets its own threads (config threads = 2, one FFT thread) and
// leaves the process's settings as it found them, also when it fails.
TEST(Trainer, RestoresThreadSettings) {
  omp_set_num_threads(1);
  set_fft_threads(3);
  const int omp_before = omp_get_max_threads(), fft_before = fft_threads();
  TrainRun run;
  run.out = temp_path("threads.h5");
  train_unrolled_model(small_mri_config(2), run);
  EXPECT_EQ(omp_get_max_threads(), omp_before);
  EXPECT_EQ(fft_threads(), fft_before);
  TrainRun bad;
  bad.out = temp_path("threads-bad.h5");
  bad.resume = true;  // no checkpoint: InputError
  EXPECT_THROW(train_unrolled_model(small_mri_config(2), bad), InputError);
  EXPECT_EQ(omp_get_max_threads(), omp_before);
  EXPECT_EQ(fft_threads(), fft_before);
  set_fft_threads(0);
  std::remove(run.out.c_str());
}

TEST(Trainer, ShortCtRunImprovesOnScaledBackProjection) {
  const std::string text =
      "[data]\nmodality = \"ct\"\nsize = 32\nviews = [10, 14]\nphotons = 1e5\n"
      "[model]\niterations = 2\ndepth = 3\nwidth = 8\ndc = \"cg\"\ncg_iterations = 8\n"
      "[train]\nsteps = 15\nbatch = 2\nvalidation_count = 4\nseed = 2\nthreads = 2\n";
  TrainRun run;
  run.out = temp_path("ct.h5");
  TrainResult r = train_unrolled_model(TrainingConfig::parse(text, "ct.toml"), run);
  EXPECT_TRUE(std::isfinite(r.val_psnr_db));
  EXPECT_GT(r.val_psnr_db, r.val_psnr_baseline_db + 3.0);
  std::remove(run.out.c_str());
}

TEST(Trainer, ResumedRunEqualsUninterruptedRun) {
  const TrainingConfig cfg = small_mri_config(8);
  TrainRun straight;
  straight.out = temp_path("straight.h5");
  train_unrolled_model(cfg, straight);

  TrainRun first;
  first.out = temp_path("resumed.h5");
  first.stop_after_steps = 4;
  TrainResult r1 = train_unrolled_model(cfg, first);
  EXPECT_TRUE(r1.interrupted);
  EXPECT_EQ(r1.steps_done, 4);
  EXPECT_TRUE(file_exists(checkpoint_path(first.out)));
  EXPECT_FALSE(file_exists(first.out));
  TrainRun second;
  second.out = first.out;
  second.resume = true;
  TrainResult r2 = train_unrolled_model(cfg, second);
  EXPECT_EQ(r2.steps_done, 8);

  UnrolledModel a = UnrolledModel::load(straight.out), b = UnrolledModel::load(second.out);
  ASSERT_EQ(a.parameter_names(), b.parameter_names());
  for (const auto& name : a.parameter_names()) {
    std::vector<float> va = a.parameter_values(name), vb = b.parameter_values(name);
    double diff = 0, norm = 0;
    for (size_t i = 0; i < va.size(); ++i) {
      diff += double(va[i] - vb[i]) * double(va[i] - vb[i]);
      norm += double(va[i]) * double(va[i]);
    }
    EXPECT_LE(std::sqrt(diff), 1e-5 * std::sqrt(norm)) << name;
  }
  // A changed config refuses to resume.
  TrainingConfig other = small_mri_config(8);
  other.text += "# changed\n";
  TrainRun third;
  third.out = temp_path("changed.h5");
  third.stop_after_steps = 2;
  train_unrolled_model(cfg, third);
  third.resume = true;
  third.stop_after_steps = 0;
  EXPECT_THROW(train_unrolled_model(other, third), InputError);
  std::remove(checkpoint_path(third.out).c_str());
  std::remove(straight.out.c_str());
  std::remove(second.out.c_str());
}

}  // namespace
}  // namespace recofold
