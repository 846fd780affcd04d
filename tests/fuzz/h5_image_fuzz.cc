// SPDX-License-Identifier: Apache-2.0
// Fuzz target: recofold image files (HDF5, io/image_file.h read_image_file).
#include "fuzz_util.h"
#include "recofold/io/image_file.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  return recofold::fuzz::run_one([&] {
    (void)recofold::read_image_file(recofold::fuzz::scratch_file(data, size, ".h5"));
  });
}
