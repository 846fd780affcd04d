// SPDX-License-Identifier: Apache-2.0
// Built instead of learn_cli.cc when recofold is configured without libtorch:
// learned reconstruction is refused with a message saying how to get it.
#include "learn_cli.h"

#include "recofold/core/error.h"

namespace recofold::cli {

ImageRecord reconstruct_unrolled_record(const Measurement&, const std::string& model_path, std::string*) {
  throw InputError(model_path, "--method unrolled",
                   "this recofold was built without the learn module (configure with "
                   "-DRECOFOLD_WITH_LIBTORCH=ON and install libtorch-dev)");
}

}  // namespace recofold::cli
