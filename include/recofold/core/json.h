// SPDX-License-Identifier: Apache-2.0
// The one JSON reader and writer: model file attributes, mask and trajectory
// reports, study manifests, `score --json`.
//
// Reading: parse_json() takes RFC 8259 text and gives a JsonValue tree, or
// throws InputError(file, field, "not valid JSON: <what> at character <n>")
// (n counts bytes from 0). Writing: JsonObjectWriter / JsonArrayWriter build
// text member by member; numbers go through json_number (shortest text that
// reads back to the same double, null for NaN and ±inf), strings through
// json_quote. Strings are UTF-8 on both sides.
#pragma once

#include <string>
#include <type_traits>
#include <utility>
#include <vector>

namespace recofold {

// A parsed JSON value. Objects keep their members in file order (keys are
// unique: the parser refuses a repeated key).
struct JsonValue {
  enum class Kind { kNull, kBool, kNumber, kString, kArray, kObject };
  Kind kind = Kind::kNull;
  bool boolean = false;                                      // kBool
  double number = 0.0;                                       // kNumber
  std::string text;                                          // kString (decoded, UTF-8)
  std::vector<JsonValue> items;                              // kArray
  std::vector<std::pair<std::string, JsonValue>> members;    // kObject

  // Member `key` of an object, or nullptr (also for a value that is no object).
  const JsonValue* find(const std::string& key) const;
};

// Limits of parse_json: nesting deeper than this is refused (no deep recursion
// on hostile input).
constexpr int kJsonMaxDepth = 256;

// Parses one JSON value (surrounding white space allowed, nothing else).
// Strict RFC 8259: no comments, trailing commas, NaN/Infinity, leading '+',
// leading zeros, raw control characters in strings or repeated keys; \u
// escapes (with surrogate pairs) become UTF-8; numbers beyond the double
// range are refused. Malformed text throws
// InputError(file, field, "not valid JSON: <what> at character <offset>").
JsonValue parse_json(const std::string& text, const std::string& file, const std::string& field);

// JSON text of a parsed value, compact on one line ({"a": 1, "b": [true, null]};
// numbers as json_number).
std::string write_json(const JsonValue& v);

// JSON string literal of `s`: quoted; '"', '\\' and control characters
// escaped (\n, \t, ... or \u00XX); bytes that are not valid UTF-8 become
// U+FFFD, so the text is always valid JSON.
std::string json_quote(const std::string& s);

// Shortest text that reads back to the same double ("0.1", "1e+100",
// "0.30000000000000004"); "null" for NaN and ±inf (JSON has no such numbers).
std::string json_number(double v);

class JsonArrayWriter;

// Builds one JSON object, member by member, in insertion order. The caller
// keeps keys unique.
class JsonObjectWriter {
 public:
  void add(const std::string& key, const std::string& value);
  void add(const std::string& key, const char* value) { add(key, std::string(value)); }
  void add(const std::string& key, double value);
  void add(const std::string& key, bool value);
  // Any integer type (int, Index, size_t, uint64_t seeds), written exactly.
  template <class T, std::enable_if_t<std::is_integral_v<T> && !std::is_same_v<T, bool>, int> = 0>
  void add(const std::string& key, T value) {
    add_raw(key, std::to_string(value));
  }
  void add(const std::string& key, const std::vector<double>& values);
  void add(const std::string& key, const std::vector<std::string>& values);
  template <class T, std::enable_if_t<std::is_integral_v<T> && !std::is_same_v<T, bool>, int> = 0>
  void add(const std::string& key, const std::vector<T>& values) {
    std::string list = "[";
    for (size_t i = 0; i < values.size(); ++i) list += (i ? ", " : "") + std::to_string(values[i]);
    add_raw(key, list + "]");
  }
  void add(const std::string& key, const JsonObjectWriter& object);
  void add(const std::string& key, const JsonArrayWriter& array);
  void add_null(const std::string& key);
  // A member whose value is already JSON text (written as given).
  void add_raw(const std::string& key, const std::string& json);

  bool empty() const { return members_.empty(); }
  // {"a": 1, "b": "x"}
  std::string str() const;
  // One member per line, indented by two spaces (for files people read):
  // {\n  "a": 1,\n  "b": "x"\n}
  std::string str_lines() const;

 private:
  std::vector<std::string> members_;  // "\"key\": value"
};

// Builds one JSON array, item by item.
class JsonArrayWriter {
 public:
  void add(const std::string& value);
  void add(const char* value) { add(std::string(value)); }
  void add(double value);
  void add(bool value);
  template <class T, std::enable_if_t<std::is_integral_v<T> && !std::is_same_v<T, bool>, int> = 0>
  void add(T value) {
    add_raw(std::to_string(value));
  }
  void add(const JsonObjectWriter& object);
  void add(const JsonArrayWriter& array);
  void add_null();
  void add_raw(const std::string& json);

  bool empty() const { return items_.empty(); }
  size_t size() const { return items_.size(); }
  // [1, "x", {"a": 2}]
  std::string str() const;

 private:
  std::vector<std::string> items_;
};

}  // namespace recofold
