// SPDX-License-Identifier: Apache-2.0
// The learned backend of the CLI: installed from the learn module when the build has one.
#pragma once

namespace recofold::cli {

// Registers the learn module's LearnedBackend (recon/learned_backend.h) once;
// the commands that run learned methods (recon, study) call it before work.
// A build without libtorch compiles learn_absent.cc instead, which installs
// nothing: find_learned_backend() then says why.
void install_learned_backend();

}  // namespace recofold::cli
