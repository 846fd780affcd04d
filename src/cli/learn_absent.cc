// SPDX-License-Identifier: Apache-2.0
// Built instead of learn_cli.cc when recofold is configured without libtorch:
// no learned backend is installed, so learned methods are refused with the
// reason find_learned_backend() gives (how to get the learn module).
#include "learn_cli.h"

namespace recofold::cli {

void install_learned_backend() {}

}  // namespace recofold::cli
