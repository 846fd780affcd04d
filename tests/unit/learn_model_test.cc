// SPDX-License-Identifier: Apache-2.0
// Tests of learned unrolled models: file round trip, bad model files and configs, refusal of unfit measurements.
#include <gtest/gtest.h>

#include <cstdio>
#include <cstring>
#include <string>
#include <omp.h>
#include <unistd.h>

#include "recofold/core/error.h"
#include "recofold/io/h5_file.h"
#include "recofold/learn/model.h"
#include "recofold/learn/training_config.h"
#include "recofold/learn/training_data.h"
#include "recofold/ops/fft.h"

namespace recofold {
namespace {

std::string temp_path(const std::string& name) {
  return "/tmp/recofold_learn_model_test_" + std::to_string(getpid()) + "_" + name;
}

UnrolledArchitecture small_architecture(LearnedDc dc = LearnedDc::kCg, LearnedPriorKind prior = LearnedPriorKind::kCnn) {
  UnrolledArchitecture a;
  a.ny = a.nx = 32;
  a.iterations = 2;
  a.depth = 3;
  a.width = 8;
  a.cg_iterations = 5;
  a.dc = dc;
  a.prior = prior;
  a.levels = 2;
  return a;
}

TrainingConditions small_conditions(int coils = 4) {
  TrainingConditions c;
  c.ny = c.nx = 32;
  c.coils_min = c.coils_max = coils;
  return c;
}

// Single-coil data: every operation on the path is repeatable bit for bit for
// a fixed thread count, so the loaded model must reproduce the saved one exactly.
TEST(UnrolledModel, SaveThenLoadReconstructsBitForBit) {
  for (LearnedDc dc : {LearnedDc::kCg, LearnedDc::kGradient}) {
    UnrolledModel model(small_architecture(dc), 3);
    model.info().trained_on = small_conditions(1);
    model.info().metrics["val_psnr_db"] = 30.5;
    Measurement m = draw_training_example(small_conditions(1), 9, 0);
    ImageC before = model.reconstruct(m);
    const std::string path = temp_path("roundtrip.h5");
    model.save(path);
    UnrolledModel loaded = UnrolledModel::load(path);
    ImageC after = loaded.reconstruct(m);
    ASSERT_EQ(before.size(), after.size());
    EXPECT_EQ(0, std::memcmp(before.data(), after.data(), sizeof(cfloat) * static_cast<size_t>(before.size())))
        << "dc " << to_string(dc) << ", max difference " << (before - after).abs().maxCoeff();
    EXPECT_EQ(model.parameter_names(), loaded.parameter_names());
    for (const auto& name : model.parameter_names())
      EXPECT_EQ(model.parameter_values(name), loaded.parameter_values(name)) << name;
    EXPECT_EQ(loaded.info().metrics.at("val_psnr_db"), 30.5);
    ASSERT_TRUE(loaded.info().trained_on.has_value());
    EXPECT_EQ(loaded.info().trained_on->to_json(), small_conditions(1).to_json());
    EXPECT_TRUE(before.abs().isFinite().all());
    std::remove(path.c_str());
  }
}

// Multi-coil SENSE data, with the operator's coil loop on one thread: the
// multi-threaded coil accumulation of MaskedFourier (ops) was seen to give
// different results between two calls under OMP_WAIT_POLICY=PASSIVE with 2
// threads, which is a property of that operator, not of the model file.
TEST(UnrolledModel, SaveThenLoadReconstructsMultiCoilBitForBitOnOneThread) {
  const int threads = omp_get_max_threads();
  omp_set_num_threads(1);
  set_fft_threads(1);
  UnrolledModel model(small_architecture(), 3);
  Measurement m = draw_training_example(small_conditions(4), 9, 0);
  ImageC before = model.reconstruct(m);
  const std::string path = temp_path("roundtrip4.h5");
  model.save(path);
  ImageC after = UnrolledModel::load(path).reconstruct(m);
  EXPECT_EQ(0, std::memcmp(before.data(), after.data(), sizeof(cfloat) * static_cast<size_t>(before.size())))
      << "max difference " << (before - after).abs().maxCoeff();
  std::remove(path.c_str());
  omp_set_num_threads(threads);
  set_fft_threads(0);
}

TEST(UnrolledModel, WaveletPriorModelRoundTripsAndHasOneThresholdPerBand) {
  UnrolledModel model(small_architecture(LearnedDc::kGradient, LearnedPriorKind::kWavelet), 1);
  auto names = model.parameter_names();
  ASSERT_EQ(names.size(), 2u);
  // 2 levels: approximation + 3 bands per level = 7 bands, 2 iterations.
  EXPECT_EQ(model.parameter_values("wavelet_log_threshold").size(), 14u);
  Measurement m = draw_training_example(small_conditions(1), 2, 0);
  ImageC img = model.reconstruct(m);
  EXPECT_TRUE(img.abs().isFinite().all());
}

TEST(UnrolledModel, LoadRejectsModelFileMissingATensor) {
  UnrolledModel model(small_architecture(), 3);
  const auto names = model.parameter_names();
  const std::string path = temp_path("missing.h5");
  {
    H5Writer w(path);
    w.write_attr("/model", "architecture", model.architecture().to_json());
    for (size_t i = 1; i < names.size(); ++i) {
      std::vector<float> v = model.parameter_values(names[i]);
      NdArray<float> a(Shape{static_cast<Index>(v.size())});
      a.data = v;
      w.write("/model/parameters/" + names[i], a);
    }
    w.commit();
  }
  try {
    UnrolledModel::load(path);
    FAIL() << "a model without " << names[0] << " loaded";
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), path);
    // Either the missing tensor or a shape mismatch of a flattened one is named.
    EXPECT_NE(std::string(e.what()).find("/model/parameters/"), std::string::npos) << e.what();
  }
  std::remove(path.c_str());
}

TEST(UnrolledModel, LoadRejectsUnknownArchitectureKey) {
  UnrolledModel model(small_architecture(), 3);
  std::string json = model.architecture().to_json();
  json.insert(1, "\"dropout\": 0.1, ");
  EXPECT_THROW(UnrolledArchitecture::from_json(json, "m.h5"), InputError);
  try {
    UnrolledArchitecture::from_json(json, "m.h5");
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("dropout"), std::string::npos) << e.what();
  }
}

TEST(UnrolledModel, RefusesMeasurementOfOtherImageSizeOrModality) {
  UnrolledModel model(small_architecture(), 3);
  TrainingConditions big = small_conditions();
  big.ny = big.nx = 64;
  Measurement m = draw_training_example(big, 1, 0);
  try {
    model.reconstruct(m, "meas.h5");
    FAIL() << "a 32x32 model reconstructed 64x64 data";
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), "meas.h5");
    EXPECT_EQ(e.field(), "image size");
  }
  TrainingConditions ct = small_conditions();
  ct.modality = Modality::kCt;
  ct.families = {"ellipses"};
  Measurement c = draw_training_example(ct, 1, 0);
  EXPECT_THROW(model.reconstruct(c, "ct.h5"), InputError);
}

TEST(UnrolledModel, WarnsWhenMeasurementLiesOutsideTrainingConditions) {
  UnrolledModel model(small_architecture(), 3);
  model.info().trained_on = small_conditions();
  Measurement inside = draw_training_example(small_conditions(), 1, 0);
  EXPECT_EQ(model.outside_training(inside), "");
  TrainingConditions shifted = small_conditions();
  shifted.noise_min = shifted.noise_max = 0.05;
  shifted.accel_min = shifted.accel_max = 8;
  Measurement outside = draw_training_example(shifted, 1, 0);
  const std::string w = model.outside_training(outside);
  EXPECT_NE(w.find("noise"), std::string::npos) << w;
  EXPECT_NE(w.find("acceleration"), std::string::npos) << w;
}

TEST(TrainingConfig, RejectsUnknownArchitectureKeyWithLine) {
  const std::string text =
      "[data]\nmodality = \"mri\"\nsize = 32\n[model]\niterations = 3\nlayers = 4\n[train]\nsteps = 5\n";
  try {
    TrainingConfig::parse(text, "bad.toml");
    FAIL() << "unknown key accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), "bad.toml");
    EXPECT_NE(std::string(e.what()).find("layers"), std::string::npos) << e.what();
  }
}

TEST(TrainingConfig, ReadsRangesAndListsAndReportsEveryViolation) {
  const std::string text =
      "[data]\nmodality = \"mri\"\nsize = [32, 48]\naccel = [3.0, 5.0]\nnoise = 0.02\ncoils = [1, 4]\n"
      "patterns = [\"lines-vd\", \"lines-uniform\"]\n[model]\ndc = \"gradient\"\n[train]\nbatch = 2\n";
  TrainingConfig c = TrainingConfig::parse(text, "ok.toml");
  EXPECT_EQ(c.data.ny, 32);
  EXPECT_EQ(c.data.nx, 48);
  EXPECT_EQ(c.data.accel_min, 3.0);
  EXPECT_EQ(c.data.accel_max, 5.0);
  EXPECT_EQ(c.data.coils_max, 4);
  EXPECT_EQ(c.architecture.nx, 48);
  EXPECT_EQ(c.architecture.dc, LearnedDc::kGradient);
  const std::string bad = "[data]\nmodality = \"mri\"\n[train]\nbatch = 0\nloss = \"huber\"\n";
  try {
    TrainingConfig::parse(bad, "bad.toml");
    FAIL();
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("batch"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("loss"), std::string::npos) << e.what();
  }
}

}  // namespace
}  // namespace recofold
