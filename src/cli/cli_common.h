// SPDX-License-Identifier: Apache-2.0
// Shared state and helpers of the recofold sub-commands (CLI only).
#pragma once

#include <CLI/CLI.hpp>

#include <memory>
#include <string>

#include "recofold/core/progress.h"
#include "recofold/core/provenance.h"

namespace recofold::cli {

// Options every sub-command sees.
struct Context {
  int threads = 0;        // --threads N; 0 = all cores
  bool quiet = false;     // --quiet: no progress output
  std::string command_line;  // argv joined, for provenance
};

// Progress reporter on stderr: a bar on terminals, periodic lines otherwise,
// nothing with --quiet.
std::unique_ptr<ProgressSink> make_progress(const Context& ctx, const std::string& label);

// Provenance with the command line filled in.
Provenance make_provenance(const Context& ctx);

// Sets OpenMP (and, once the ops module exists, FFTW) threads from --threads.
void apply_threads(const Context& ctx);

// Throws InputError naming `flag` unless the folder of `path` exists and `path`
// has one of the given extensions (e.g. {".h5"}); empty list = any extension.
void require_output_path(const std::string& path, const std::string& flag,
                         const std::vector<std::string>& extensions);

// Prints `text` to stdout with a newline (CLI code may print; library code may not).
void say(const Context& ctx, const std::string& text);

}  // namespace recofold::cli
