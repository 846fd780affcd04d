// SPDX-License-Identifier: Apache-2.0
// Fuzz target: CT view protocol files (TOML, sampling/view_set.h load_ct_protocol),
// and the view set they describe.
#include "fuzz_util.h"
#include "recofold/sampling/view_set.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  return recofold::fuzz::run_one([&] {
    const std::string path = recofold::fuzz::scratch_file(data, size, ".toml");
    const recofold::CtProtocol p = recofold::load_ct_protocol(path);
    (void)recofold::make_view_set(p.views);
  });
}
