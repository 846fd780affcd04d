// SPDX-License-Identifier: Apache-2.0
// Fuzz target: phantom tables (TOML text, phantom/phantom_table.h).
#include "fuzz_util.h"
#include "recofold/phantom/phantom_table.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  return recofold::fuzz::run_one([&] {
    const recofold::Phantom p = recofold::parse_phantom_table(recofold::fuzz::text_of(data, size), "fuzz.toml");
    (void)recofold::phantom_to_table(p);
  });
}
