// SPDX-License-Identifier: Apache-2.0
// The learn module's implementation of the learned-reconstruction backend (recon/learned_backend.h).
#pragma once

#include <memory>

#include "recofold/recon/learned_backend.h"

namespace recofold {

// The backend over UnrolledModel (model.h) and train_unrolled_model (trainer.h).
// Models are loaded once per path and kept; reconstructions of one model are
// serialised (a torch module is not shared between threads), different models
// run side by side. Register it with register_learned_backend().
std::unique_ptr<LearnedBackend> make_learn_backend();

}  // namespace recofold
