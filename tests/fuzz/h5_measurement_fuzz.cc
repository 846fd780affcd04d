// SPDX-License-Identifier: Apache-2.0
// Fuzz target: measurement files (HDF5, io/measurement_file.h read_measurement_file).
#include "fuzz_util.h"
#include "recofold/io/measurement_file.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  return recofold::fuzz::run_one([&] {
    (void)recofold::read_measurement_file(recofold::fuzz::scratch_file(data, size, ".h5"));
  });
}
