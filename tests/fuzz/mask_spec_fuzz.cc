// SPDX-License-Identifier: Apache-2.0
// Fuzz target: MRI sampling spec files (TOML, sampling/mask.h mask_options_from_config).
#include "fuzz_util.h"
#include "recofold/core/config.h"
#include "recofold/sampling/mask.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  return recofold::fuzz::run_one([&] {
    const recofold::Config cfg = recofold::Config::parse(recofold::fuzz::text_of(data, size), "fuzz.toml");
    (void)recofold::mask_options_from_config(cfg);
  });
}
