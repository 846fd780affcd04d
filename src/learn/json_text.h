// SPDX-License-Identifier: Apache-2.0
// Minimal JSON reading and writing for the text attributes of model files (private to learn).
#pragma once

#include <string>
#include <utility>
#include <vector>

namespace recofold::internal {

// A parsed JSON value. Objects keep their members in file order.
struct JsonValue {
  enum class Kind { kNull, kBool, kNumber, kString, kArray, kObject };
  Kind kind = Kind::kNull;
  bool boolean = false;
  double number = 0.0;
  std::string text;
  std::vector<JsonValue> items;                              // kArray
  std::vector<std::pair<std::string, JsonValue>> members;    // kObject

  // Member `key` of an object, or nullptr.
  const JsonValue* find(const std::string& key) const;
};

// Parses RFC 8259 JSON (without \u escapes beyond ASCII). Malformed text throws
// InputError(file, field, "not valid JSON: ..." with the character offset).
JsonValue parse_json(const std::string& text, const std::string& file, const std::string& field);

// Builds one flat JSON object, member by member, in insertion order.
class JsonObjectWriter {
 public:
  void add(const std::string& key, const std::string& value);
  void add(const std::string& key, const char* value) { add(key, std::string(value)); }
  void add(const std::string& key, double value);
  void add(const std::string& key, long long value);
  void add(const std::string& key, int value) { add(key, static_cast<long long>(value)); }
  void add(const std::string& key, bool value);
  void add(const std::string& key, const std::vector<double>& values);
  void add(const std::string& key, const std::vector<std::string>& values);
  // A member whose value is already JSON text (a nested object).
  void add_raw(const std::string& key, const std::string& json);
  std::string str() const { return "{" + body_ + "}"; }

 private:
  void key(const std::string& k);
  std::string body_;
};

// JSON text of a parsed value (compact; numbers as json_number).
std::string write_json(const JsonValue& v);

// JSON string literal of `s` (quotes and escapes).
std::string json_quote(const std::string& s);
// Shortest text that reads back to the same double ("%.17g", trimmed).
std::string json_number(double v);

}  // namespace recofold::internal
