// SPDX-License-Identifier: Apache-2.0
// The learned backend of the CLI, from the learn module (built with libtorch).
#include "learn_cli.h"

#include <mutex>

#include "recofold/learn/backend.h"
#include "recofold/recon/learned_backend.h"

namespace recofold::cli {

void install_learned_backend() {
  static std::once_flag once;
  std::call_once(once, [] { register_learned_backend(make_learn_backend()); });
}

}  // namespace recofold::cli
