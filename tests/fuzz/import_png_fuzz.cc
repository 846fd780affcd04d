// SPDX-License-Identifier: Apache-2.0
// Fuzz target: .png import (io/image_export.h read_image_any, ITK / io's own reader).
#include "fuzz_util.h"
#include "recofold/io/image_export.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  return recofold::fuzz::run_one([&] {
    (void)recofold::read_image_any(recofold::fuzz::scratch_file(data, size, ".png"));
  });
}
