// SPDX-License-Identifier: Apache-2.0
// The learned backend of the CLI: installed from the learn module when the build has one.
#pragma once

namespace recofold::cli {

// Loads the learn module (a shared library with libtorch) and registers its
// LearnedBackend (recon/learned_backend.h), once; the commands that run,
// inspect or train learned models (recon, study, train) call it before work.
// When the module cannot be loaded, nothing is registered and
// find_learned_backend() gives the reason (which file, what failed).
// A build without libtorch compiles learn_absent.cc instead, which installs
// nothing: find_learned_backend() then says why.
void install_learned_backend();

}  // namespace recofold::cli
