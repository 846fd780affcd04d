// SPDX-License-Identifier: Apache-2.0
// Conversion of validation messages into InputError.
#include "recofold/priors/option_errors.h"

#include "recofold/core/error.h"

namespace recofold {

void throw_if_invalid(const std::vector<std::string>& errors, const std::string& file) {
  if (errors.empty()) return;
  const std::string& first = errors.front();
  const std::string field = first.substr(0, first.find(' '));
  std::string reason;
  for (size_t i = 0; i < errors.size(); ++i) reason += (i ? "; " : "") + errors[i];
  throw InputError(file, field, reason);
}

}  // namespace recofold
