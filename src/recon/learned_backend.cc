// SPDX-License-Identifier: Apache-2.0
// The registry of the learned-reconstruction backend.
#include "recofold/recon/learned_backend.h"

#include <mutex>

namespace recofold {

namespace {

struct Registry {
  std::mutex mutex;
  std::unique_ptr<LearnedBackend> backend;
  std::string absence;  // why there is none, when set
};

Registry& registry() {
  static Registry r;
  return r;
}

}  // namespace

LearnedBackendLookup find_learned_backend() {
  Registry& r = registry();
  std::lock_guard<std::mutex> lock(r.mutex);
  LearnedBackendLookup out;
  out.backend = r.backend.get();
  if (!out.backend && !r.absence.empty())
    out.reason = r.absence;
  else if (!out.backend)
    out.reason =
        "this recofold has no learn module (built with -DRECOFOLD_WITH_LIBTORCH=OFF); rebuild with libtorch-dev "
        "installed and -DRECOFOLD_WITH_LIBTORCH=ON for learned methods";
  return out;
}

void register_learned_backend(std::unique_ptr<LearnedBackend> backend) {
  Registry& r = registry();
  std::lock_guard<std::mutex> lock(r.mutex);
  r.backend = std::move(backend);
}

}  // namespace recofold

namespace recofold {

void set_learned_backend_absence(const std::string& reason) {
  Registry& r = registry();
  std::lock_guard<std::mutex> lock(r.mutex);
  r.absence = reason;
}

}  // namespace recofold
