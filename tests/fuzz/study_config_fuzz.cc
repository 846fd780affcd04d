// SPDX-License-Identifier: Apache-2.0
// Fuzz target: study configs (TOML, study/study_config.h StudyConfig::parse).
#include "fuzz_util.h"
#include "recofold/study/study_config.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  return recofold::fuzz::run_one([&] {
    (void)recofold::StudyConfig::parse(recofold::fuzz::text_of(data, size), "fuzz.toml", "/nonexistent-fuzz-dir");
  });
}
