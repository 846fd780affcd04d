// SPDX-License-Identifier: Apache-2.0
// Error types and the abort path of RECOFOLD_CHECK.
#include "recofold/core/error.h"

#include <cstdio>
#include <cstdlib>

namespace recofold {

namespace {
std::string compose(const std::string& file, const std::string& field, const std::string& reason,
                    int line) {
  std::string out;
  if (!file.empty()) {
    out += file;
    if (line > 0) out += ":" + std::to_string(line);
    out += ": ";
  }
  if (!field.empty()) out += field + ": ";
  out += reason;
  return out;
}
}  // namespace

InputError::InputError(std::string file, std::string field, const std::string& reason, int line)
    : Error(compose(file, field, reason, line)),
      file_(std::move(file)),
      field_(std::move(field)),
      reason_(reason),
      line_(line) {}

namespace internal {
CheckFailure::CheckFailure(const char* file, int line, const char* cond) {
  msg_ << "recofold internal check failed at " << file << ":" << line << ": " << cond << " ";
}
CheckFailure::~CheckFailure() {
  std::fprintf(stderr, "%s\n", msg_.str().c_str());
  std::abort();
}
}  // namespace internal

}  // namespace recofold
