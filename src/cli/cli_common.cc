// SPDX-License-Identifier: Apache-2.0
// Shared helpers of the sub-commands.
#include "cli_common.h"

#include "output_checks_cli.h"

#include <omp.h>
#include <sys/stat.h>
#include <unistd.h>

#include <iostream>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/field_error.h"
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
  require_writable_file(path, flag);  // output_checks_cli.h
  if (extensions.empty()) return;
  const std::string ext = file_extension(path);
  for (const auto& e : extensions)
    if (e == ext) return;
  std::string list;
  for (const auto& e : extensions) list += (list.empty() ? "" : ", ") + e;
  throw InputError(path, flag, "unsupported file extension '" + ext + "' (expected one of: " + list + ")");
}

std::string flag_of_field(const std::string& field, const std::vector<FieldFlag>& map) {
  const FieldFlag* best = nullptr;
  for (const FieldFlag& m : map) {
    const bool prefix = !m.field.empty() && (m.field.back() == '.' || m.field.back() == '[');
    const bool hit = prefix ? field.rfind(m.field, 0) == 0 : field == m.field;
    if (hit && (best == nullptr || m.field.size() > best->field.size())) best = &m;
  }
  return best ? best->flag : "";
}

void throw_with_flags(const InputError& e, const std::vector<FieldFlag>& map, const std::string& file) {
  const std::string where = e.file().empty() ? file : e.file();
  if (const auto* fields = dynamic_cast<const InvalidFields*>(&e)) {
    std::vector<FieldError> mapped = fields->errors();
    for (FieldError& f : mapped) {
      const std::string flag = flag_of_field(f.field, map);
      if (!flag.empty()) f.field = flag;
    }
    throw InvalidFields(std::move(mapped), where, e.line());
  }
  const std::string flag = flag_of_field(e.field(), map);
  throw InputError(where, flag.empty() ? e.field() : flag, e.reason(), e.line());
}

void say(const Context&, const std::string& text) { std::cout << text << "\n"; }

std::pair<Index, Index> parse_grid_size(const std::string& text, const std::string& flag) {
  const auto x = text.find('x');
  try {
    size_t used = 0, u2 = 0;
    if (x == std::string::npos) {
      const long long v = std::stoll(text, &used);
      if (used == text.size()) return {v, v};
    } else {
      const long long a = std::stoll(text.substr(0, x), &used);
      const long long b = std::stoll(text.substr(x + 1), &u2);
      if (used == x && u2 == text.size() - x - 1) return {a, b};
    }
  } catch (const std::exception&) {
  }
  throw InputError("", flag, "'" + text + "' is not a size; expected N or NYxNX (e.g. 256 or 256x192)");
}

}  // namespace recofold::cli
