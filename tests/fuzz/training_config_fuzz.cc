// SPDX-License-Identifier: Apache-2.0
// Fuzz target: training configs (TOML, learn/training_config.h TrainingConfig::parse).
// The reader and the architecture readers it calls do not use libtorch, so
// tests/fuzz/CMakeLists.txt compiles their three sources into this target and
// it builds without the learn module.
#include "fuzz_util.h"
#include "recofold/learn/training_config.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  return recofold::fuzz::run_one([&] {
    (void)recofold::TrainingConfig::parse(recofold::fuzz::text_of(data, size), "fuzz.toml");
  });
}
