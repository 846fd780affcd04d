// SPDX-License-Identifier: Apache-2.0
// Violations named by field path, and the InputError that carries all of them.
//
// Library records (ReconSpec, acquisition options) report what is wrong with
// them by field path ("prior.wavelet.levels"), never by a command-line flag or
// a TOML key: the front ends map the paths to their own names (the CLI to
// flags, the study to TOML keys with file and line) and re-throw.
#pragma once

#include <string>
#include <vector>

#include "recofold/core/error.h"

namespace recofold {

// One violated rule of one field.
struct FieldError {
  std::string field;  // dotted path: "prior.wavelet.levels", "lambda", "ct.detector_count"
  std::string value;  // the offending value as text ("9", "'foo'"); "" when absent or not applicable
  std::string rule;   // what was expected: "must be 1..6 for 64x64"

  // "prior.wavelet.levels = 9; must be 1..6 for 64x64", or "field: rule" without a value.
  std::string text() const;
};

// Reads a message of the "name = value; rule" (or "name: rule", or "name rule")
// form that Options::validate() functions return, and prefixes the name:
//   parse_field_message("levels = 9; must be ...", "prior.wavelet.")
//     -> {"prior.wavelet.levels", "9", "must be ..."}.
FieldError parse_field_message(const std::string& message, const std::string& prefix = "");
std::vector<FieldError> parse_field_messages(const std::vector<std::string>& messages,
                                             const std::string& prefix = "");

// Bad input found in a record: every violation at once. field() is the first
// violation's field, reason() joins every violation's text with "; ", and
// what() is "file:line: " (when a file is given) followed by that list, e.g.
//   configs/x.toml:31: method[2].lambda = -1; must be >= 0 or "auto"
class InvalidFields : public InputError {
 public:
  explicit InvalidFields(std::vector<FieldError> errors, std::string file = "", int line = 0);
  const std::vector<FieldError>& errors() const { return errors_; }
  const char* what() const noexcept override { return text_.c_str(); }

 private:
  std::vector<FieldError> errors_;
  std::string text_;
};

// Throws InvalidFields(errors, file) unless `errors` is empty.
void throw_if_invalid(const std::vector<FieldError>& errors, const std::string& file = "");

}  // namespace recofold
