// SPDX-License-Identifier: Apache-2.0
// Shared state and helpers of the recofold sub-commands (CLI only).
#pragma once

#include <CLI/CLI.hpp>

#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "recofold/core/error.h"
#include "recofold/core/progress.h"
#include "recofold/core/provenance.h"
#include "recofold/core/types.h"

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

// How a library field path appears on the command line: `field` is an exact
// path ("prior.wavelet.levels") or a prefix ending in '.' or '[' ("ct.angles_rad[").
struct FieldFlag {
  std::string field;
  std::string flag;
};

// The flag of a field path by the longest matching entry of `map`; "" when none matches.
std::string flag_of_field(const std::string& field, const std::vector<FieldFlag>& map);

// Re-throws a library InputError whose fields are paths with those paths
// replaced by flags (InvalidFields: every violation, "--levels = 9; must be
// 1..6 for 64x64"); unmapped fields keep their path. `file` replaces an empty
// file of the error.
[[noreturn]] void throw_with_flags(const InputError& error, const std::vector<FieldFlag>& map,
                                   const std::string& file = "");

// Prints `text` to stdout with a newline (CLI code may print; library code may not).
void say(const Context& ctx, const std::string& text);

// A grid size flag: "256" (square) or "256x192" (rows x columns), the one syntax of every
// --size. InputError naming `flag` for anything else (range checks are the caller's).
std::pair<Index, Index> parse_grid_size(const std::string& text, const std::string& flag = "--size");

}  // namespace recofold::cli
