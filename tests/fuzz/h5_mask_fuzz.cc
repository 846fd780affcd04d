// SPDX-License-Identifier: Apache-2.0
// Fuzz target: mask files (HDF5, io/mask_file.h read_mask_file: /mask, else /mri/mask, else /image).
#include "fuzz_util.h"
#include "recofold/io/mask_file.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  return recofold::fuzz::run_one([&] {
    (void)recofold::read_mask_file(recofold::fuzz::scratch_file(data, size, ".h5"), "mask");
  });
}
