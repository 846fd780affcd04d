// SPDX-License-Identifier: Apache-2.0
// Field-path violations and InvalidFields.
#include "recofold/core/field_error.h"

namespace recofold {

namespace {

std::string joined(const std::vector<FieldError>& errors) {
  std::string s;
  for (const FieldError& e : errors) s += (s.empty() ? "" : "; ") + e.text();
  return s;
}

std::string located(const std::string& file, int line, const std::string& text) {
  if (file.empty()) return text;
  return file + (line > 0 ? ":" + std::to_string(line) : std::string()) + ": " + text;
}

}  // namespace

std::string FieldError::text() const {
  if (value.empty()) return field + (rule.empty() ? "" : ": " + rule);
  return field + " = " + value + (rule.empty() ? "" : "; " + rule);
}

FieldError parse_field_message(const std::string& message, const std::string& prefix) {
  FieldError e;
  const size_t eq = message.find(" = ");
  const size_t name_end = message.find_first_of(" :;");
  if (eq != std::string::npos && eq == name_end) {
    e.field = prefix + message.substr(0, eq);
    const size_t semi = message.find("; ", eq + 3);
    if (semi == std::string::npos) {
      e.value = message.substr(eq + 3);
    } else {
      e.value = message.substr(eq + 3, semi - eq - 3);
      e.rule = message.substr(semi + 2);
    }
    return e;
  }
  if (name_end == std::string::npos) {
    e.field = prefix + message;
    return e;
  }
  e.field = prefix + message.substr(0, name_end);
  size_t rest = name_end;
  while (rest < message.size() && (message[rest] == ' ' || message[rest] == ':' || message[rest] == ';')) ++rest;
  e.rule = message.substr(rest);
  return e;
}

std::vector<FieldError> parse_field_messages(const std::vector<std::string>& messages, const std::string& prefix) {
  std::vector<FieldError> out;
  for (const std::string& m : messages) out.push_back(parse_field_message(m, prefix));
  return out;
}

InvalidFields::InvalidFields(std::vector<FieldError> errors, std::string file, int line)
    : InputError(file, errors.empty() ? std::string() : errors.front().field, joined(errors), line),
      errors_(std::move(errors)),
      text_(located(this->file(), line, joined(errors_))) {}

void throw_if_invalid(const std::vector<FieldError>& errors, const std::string& file) {
  if (!errors.empty()) throw InvalidFields(errors, file);
}

}  // namespace recofold
