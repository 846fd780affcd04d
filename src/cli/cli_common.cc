// SPDX-License-Identifier: Apache-2.0
// Shared helpers of the sub-commands.
#include "cli_common.h"

#include <omp.h>
#include <sys/stat.h>
#include <unistd.h>

#include <iostream>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/ops/fft.h"

namespace recofold::cli {

std::unique_ptr<ProgressSink> make_progress(const Context& ctx, const std::string& label) {
  return std::make_unique<StreamProgress>(std::cerr, label,
                                          choose_progress_mode(ctx.quiet, ::isatty(STDERR_FILENO) != 0));
}

Provenance make_provenance(const Context& ctx) {
  Provenance p;
  p.command = ctx.command_line;
  return p;
}

void apply_threads(const Context& ctx) {
  if (ctx.threads > 0) omp_set_num_threads(ctx.threads);
  set_fft_threads(ctx.threads);  // 0: all cores
}

void require_output_path(const std::string& path, const std::string& flag,
                         const std::vector<std::string>& extensions) {
  if (path.empty()) throw InputError("", flag, "an output path is required");
  const auto slash = path.find_last_of('/');
  if (slash != std::string::npos) {
    const std::string dir = slash == 0 ? "/" : path.substr(0, slash);
    struct stat st;
    if (::stat(dir.c_str(), &st) != 0 || !S_ISDIR(st.st_mode))
      throw InputError(path, flag, "output folder '" + dir + "' does not exist");
  }
  if (extensions.empty()) return;
  const std::string ext = file_extension(path);
  for (const auto& e : extensions)
    if (e == ext) return;
  std::string list;
  for (const auto& e : extensions) list += (list.empty() ? "" : ", ") + e;
  throw InputError(path, flag, "unsupported file extension '" + ext + "' (expected one of: " + list + ")");
}

void say(const Context&, const std::string& text) { std::cout << text << "\n"; }

}  // namespace recofold::cli
