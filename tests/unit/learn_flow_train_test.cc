// SPDX-License-Identifier: Apache-2.0
// Tests of flow training: the likelihood improves, resume is exact, trained_on records the objects seen.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <cstdio>
#include <string>
#include <unistd.h>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/learn/flow_model.h"
#include "recofold/learn/trainer.h"
#include "recofold/learn/training_data.h"

namespace recofold {
namespace {

std::string temp_path(const std::string& name) {
  return "/tmp/recofold_learn_flow_train_test_" + std::to_string(getpid()) + "_" + name;
}

TrainingConfig flow_config(int64_t steps) {
  const std::string text =
      "[data]\nmodality = \"mri\"\nsize = 16\nfamilies = \"textured\"\n"
      "[model]\nkind = \"flow\"\nscales = 2\ncouplings = 2\nwidth = 16\ndequant = 0.0078125\n"
      "[train]\nsteps = " + std::to_string(steps) + "\nbatch = 8\nlearning_rate = 2e-3\n"
      "validation_count = 16\nvalidation_every = 1000\ncheckpoint_every = 1000\nseed = 3\nthreads = 2\n";
  return TrainingConfig::parse(text, "flow.toml");
}

TEST(FlowTrainer, ShortRunLowersHeldOutBitsPerDimension) {
  TrainingConfig cfg = flow_config(60);
  ASSERT_EQ(cfg.kind, "flow");
  TrainRun run;
  run.out = temp_path("learns.h5");
  // The untrained flow (actnorm only, fitted to the first batch) as the baseline.
  TrainingConfig one = flow_config(1);
  TrainRun r1;
  r1.out = temp_path("one.h5");
  const TrainResult first = train_model(one, r1);
  const TrainResult r = train_model(cfg, run);
  EXPECT_EQ(r.steps_done, 60);
  EXPECT_TRUE(std::isfinite(r.val_bits_per_dim));
  EXPECT_LT(r.val_bits_per_dim, first.val_bits_per_dim - 0.3)
      << "after 60 steps " << r.val_bits_per_dim << ", after 1 step " << first.val_bits_per_dim;
  FlowModel m = FlowModel::load(run.out);
  EXPECT_NEAR(m.info().metrics.at("val_bits_per_dim"), r.val_bits_per_dim, 1e-9);
  ASSERT_TRUE(m.info().trained_on.has_value());
  const auto& seeds = m.info().trained_on->seeds;
  ASSERT_EQ(seeds.size(), 2u);
  EXPECT_EQ(seeds[0].use, "train");
  EXPECT_EQ(seeds[0].seed, 3u);
  EXPECT_EQ(seeds[0].first, 0u);
  EXPECT_EQ(seeds[0].last, 60u * 8 - 1);
  EXPECT_EQ(seeds[1].use, "validation");
  EXPECT_EQ(seeds[1].seed, validation_seed(3));
  EXPECT_EQ(seeds[1].last, 15u);
  // The seeds survive the JSON round trip exactly.
  TrainingConditions back = TrainingConditions::from_json(m.info().trained_on->to_json(), "x");
  EXPECT_EQ(back.seeds[1].seed, validation_seed(3));
  // The model's bits/dim of a held-out object agrees with the trainer's scale.
  NdArray<float> img(Shape{16, 16});
  ImageF obj = draw_training_object(cfg.data, validation_seed(3), 0);
  std::copy(obj.data(), obj.data() + obj.size(), img.data.begin());
  EXPECT_NEAR(m.bits_per_dim(img)[0], r.val_bits_per_dim, 1.5);
  EXPECT_FALSE(file_exists(checkpoint_path(run.out)));
  std::remove(run.out.c_str());
  std::remove(r1.out.c_str());
}

TEST(FlowTrainer, InterruptedAndResumedRunEqualsUninterruptedRun) {
  TrainingConfig cfg = flow_config(12);
  TrainRun full;
  full.out = temp_path("full.h5");
  const TrainResult a = train_model(cfg, full);
  TrainRun part;
  part.out = temp_path("part.h5");
  part.stop_after_steps = 5;
  const TrainResult p = train_model(cfg, part);
  ASSERT_TRUE(p.interrupted);
  EXPECT_TRUE(file_exists(checkpoint_path(part.out)));
  EXPECT_FALSE(file_exists(part.out));
  TrainRun rest;
  rest.out = part.out;
  rest.resume = true;
  const TrainResult b = train_model(cfg, rest);
  EXPECT_EQ(b.steps_done, 12);
  EXPECT_EQ(a.val_bits_per_dim, b.val_bits_per_dim);
  FlowModel ma = FlowModel::load(full.out), mb = FlowModel::load(part.out);
  for (const auto& n : ma.parameter_names()) EXPECT_EQ(ma.parameter_values(n), mb.parameter_values(n)) << n;
  // A changed config refuses to resume.
  part.stop_after_steps = 5;
  train_model(cfg, part);
  TrainingConfig other = flow_config(13);
  EXPECT_THROW(train_model(other, rest), InputError);
  std::remove(checkpoint_path(part.out).c_str());
  std::remove(full.out.c_str());
  std::remove(part.out.c_str());
}

TEST(TrainingConfig, FlowKindRejectsUnrolledKeysAndUnrolledFlowPriorNeedsAFlowFile) {
  const std::string bad =
      "[data]\nmodality = \"mri\"\nsize = 16\n[model]\nkind = \"flow\"\ndepth = 4\n";
  try {
    TrainingConfig::parse(bad, "bad.toml");
    ADD_FAILURE();
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("depth"), std::string::npos) << e.what();
  }
  const std::string missing =
      "[data]\nmodality = \"mri\"\nsize = 16\n[model]\nprior = \"flow\"\nflow_model = \"/nonexistent/f.h5\"\n";
  try {
    TrainingConfig::parse(missing, "m.toml");
    ADD_FAILURE();
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "model.flow_model");
  }
  const std::string none = "[data]\nmodality = \"mri\"\nsize = 16\n[model]\nprior = \"flow\"\n";
  EXPECT_THROW(TrainingConfig::parse(none, "n.toml"), InputError);
}

// An unrolled model with the flow prior starts from the flow file's weights.
TEST(Trainer, FlowPriorModelStartsFromTheTrainedFlowAndKeepsItFrozen) {
  TrainRun fr;
  fr.out = temp_path("prior_flow.h5");
  train_model(flow_config(5), fr);
  const std::string text =
      "[data]\nmodality = \"mri\"\nsize = 16\naccel = 3.0\nnoise = 0.01\ncoils = 1\n"
      "[model]\nprior = \"flow\"\nflow_model = \"" + fr.out + "\"\niterations = 2\ndc = \"cg\"\ncg_iterations = 3\n"
      "flow_steps = 1\n[train]\nsteps = 3\nbatch = 2\nvalidation_count = 2\nseed = 4\nthreads = 2\n";
  TrainingConfig cfg = TrainingConfig::parse(text, "unrolled-flow.toml");
  ASSERT_TRUE(cfg.architecture.flow.has_value());
  TrainRun run;
  run.out = temp_path("unrolled_flow.h5");
  const TrainResult r = train_model(cfg, run);
  EXPECT_TRUE(std::isfinite(r.val_psnr_db));
  FlowModel flow = FlowModel::load(fr.out);
  UnrolledModel m = UnrolledModel::load(run.out);
  for (const auto& n : flow.parameter_names())
    EXPECT_EQ(flow.parameter_values(n), m.parameter_values("flow." + n)) << n;
  EXPECT_NE(m.parameter_values("flow_log_lambda"), std::vector<float>(2, float(std::log(1e-4))));
  std::remove(fr.out.c_str());
  std::remove(run.out.c_str());
}

// The shipped training configs load and describe what their comments say.
TEST(TrainingConfig, ShippedConfigsLoadAsDescribed) {
  const char* src = std::getenv("RECOFOLD_SOURCE_DIR");
  ASSERT_NE(src, nullptr);
  const std::string dir = std::string(src) + "/configs/";
  const TrainingConfig unet = TrainingConfig::load(dir + "train-mri-unet.toml");
  EXPECT_EQ(unet.kind, "unrolled");
  EXPECT_EQ(unet.architecture.prior, LearnedPriorKind::kUnet);
  EXPECT_TRUE(unet.architecture.skips);
  EXPECT_EQ(unet.data.ny, 64);
  const TrainingConfig tv = TrainingConfig::load(dir + "train-mri-tv-learned.toml");
  EXPECT_EQ(tv.architecture.prior, LearnedPriorKind::kTv);
  EXPECT_EQ(tv.architecture.iterations, 10);
  const TrainingConfig flow = TrainingConfig::load(dir + "train-mri-flow.toml");
  EXPECT_EQ(flow.kind, "flow");
  EXPECT_EQ(flow.flow.ny, 64);
  EXPECT_EQ(flow.flow.scales, 3);
  EXPECT_EQ(flow.flow.mixing, FlowMixing::kInvConv);
  for (const TrainingConfig* c : {&unet, &tv, &flow}) EXPECT_LE(c->train.max_minutes, 20.0) << c->file;
}

}  // namespace
}  // namespace recofold
