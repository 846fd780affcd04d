// SPDX-License-Identifier: Apache-2.0
// JSON reading (strict RFC 8259) and writing.
#include "recofold/core/json.h"

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <unordered_set>

#include "recofold/core/error.h"

namespace recofold {

const JsonValue* JsonValue::find(const std::string& key) const {
  for (const auto& m : members)
    if (m.first == key) return &m.second;
  return nullptr;
}

namespace {

bool is_digit(char c) { return c >= '0' && c <= '9'; }

int hex_digit(char c) {
  if (c >= '0' && c <= '9') return c - '0';
  if (c >= 'a' && c <= 'f') return c - 'a' + 10;
  if (c >= 'A' && c <= 'F') return c - 'A' + 10;
  return -1;
}

void append_utf8(std::string& out, unsigned code) {
  if (code < 0x80) {
    out += static_cast<char>(code);
  } else if (code < 0x800) {
    out += static_cast<char>(0xC0 | (code >> 6));
    out += static_cast<char>(0x80 | (code & 0x3F));
  } else if (code < 0x10000) {
    out += static_cast<char>(0xE0 | (code >> 12));
    out += static_cast<char>(0x80 | ((code >> 6) & 0x3F));
    out += static_cast<char>(0x80 | (code & 0x3F));
  } else {
    out += static_cast<char>(0xF0 | (code >> 18));
    out += static_cast<char>(0x80 | ((code >> 12) & 0x3F));
    out += static_cast<char>(0x80 | ((code >> 6) & 0x3F));
    out += static_cast<char>(0x80 | (code & 0x3F));
  }
}

// Length of the well-formed UTF-8 sequence starting at s[i] (1..4), or 0
// (Unicode 15, table 3-7: no overlong forms, no surrogates, at most U+10FFFF).
size_t utf8_length(const std::string& s, size_t i) {
  const auto byte = [&](size_t k) { return i + k < s.size() ? static_cast<unsigned char>(s[i + k]) : 0u; };
  const unsigned b0 = byte(0);
  const auto cont = [&](size_t k, unsigned lo = 0x80, unsigned hi = 0xBF) {
    const unsigned b = byte(k);
    return b >= lo && b <= hi;
  };
  if (b0 < 0x80) return 1;
  if (b0 >= 0xC2 && b0 <= 0xDF) return cont(1) ? 2 : 0;
  if (b0 >= 0xE0 && b0 <= 0xEF) {
    const unsigned lo = b0 == 0xE0 ? 0xA0 : 0x80, hi = b0 == 0xED ? 0x9F : 0xBF;
    return cont(1, lo, hi) && cont(2) ? 3 : 0;
  }
  if (b0 >= 0xF0 && b0 <= 0xF4) {
    const unsigned lo = b0 == 0xF0 ? 0x90 : 0x80, hi = b0 == 0xF4 ? 0x8F : 0xBF;
    return cont(1, lo, hi) && cont(2) && cont(3) ? 4 : 0;
  }
  return 0;
}

class Parser {
 public:
  Parser(const std::string& text, const std::string& file, const std::string& field)
      : s_(text), file_(file), field_(field) {}

  JsonValue document() {
    JsonValue v = value(0);
    skip();
    if (pos_ != s_.size()) fail("unexpected text after the value");
    return v;
  }

 private:
  [[noreturn]] void fail(const std::string& what) const {
    throw InputError(file_, field_, "not valid JSON: " + what + " at character " + std::to_string(pos_));
  }
  void skip() {
    while (pos_ < s_.size() && (s_[pos_] == ' ' || s_[pos_] == '\n' || s_[pos_] == '\r' || s_[pos_] == '\t'))
      ++pos_;
  }
  bool eat(char c) {
    skip();
    if (pos_ < s_.size() && s_[pos_] == c) {
      ++pos_;
      return true;
    }
    return false;
  }
  bool word(const char* w) {
    const size_t n = std::char_traits<char>::length(w);
    if (s_.compare(pos_, n, w) == 0) {
      pos_ += n;
      return true;
    }
    return false;
  }
  unsigned hex4() {
    if (pos_ + 4 > s_.size()) fail("short \\u escape");
    unsigned code = 0;
    for (int k = 0; k < 4; ++k) {
      const int d = hex_digit(s_[pos_]);
      if (d < 0) fail("\\u escape needs 4 hex digits");
      code = code * 16 + static_cast<unsigned>(d);
      ++pos_;
    }
    return code;
  }
  // After "\u": one code point, a surrogate pair taken together.
  unsigned unicode_escape() {
    const unsigned hi = hex4();
    if (hi >= 0xDC00 && hi <= 0xDFFF) fail("\\u escape is a lone low surrogate");
    if (hi < 0xD800 || hi > 0xDBFF) return hi;
    if (!word("\\u")) fail("high surrogate without its low surrogate");
    const unsigned lo = hex4();
    if (lo < 0xDC00 || lo > 0xDFFF) fail("high surrogate without its low surrogate");
    return 0x10000 + ((hi - 0xD800) << 10) + (lo - 0xDC00);
  }
  void escape(std::string& out) {
    if (pos_ >= s_.size()) fail("unfinished escape");
    const char e = s_[pos_++];
    switch (e) {
      case '"': out += '"'; break;
      case '\\': out += '\\'; break;
      case '/': out += '/'; break;
      case 'b': out += '\b'; break;
      case 'f': out += '\f'; break;
      case 'n': out += '\n'; break;
      case 'r': out += '\r'; break;
      case 't': out += '\t'; break;
      case 'u': append_utf8(out, unicode_escape()); break;
      default: --pos_; fail("unknown escape");
    }
  }
  std::string string_literal() {
    if (!eat('"')) fail("expected a string");
    std::string out;
    while (pos_ < s_.size() && s_[pos_] != '"') {
      const char c = s_[pos_];
      if (static_cast<unsigned char>(c) < 0x20) fail("control character in a string (escape it)");
      ++pos_;
      if (c == '\\')
        escape(out);
      else
        out += c;
    }
    if (pos_ >= s_.size()) fail("unfinished string");
    ++pos_;
    return out;
  }
  // -?(0|[1-9][0-9]*)(\.[0-9]+)?([eE][+-]?[0-9]+)?
  double number_literal() {
    const size_t begin = pos_;
    auto digits = [&] {
      const size_t from = pos_;
      while (pos_ < s_.size() && is_digit(s_[pos_])) ++pos_;
      return pos_ - from;
    };
    if (pos_ < s_.size() && s_[pos_] == '-') ++pos_;
    if (pos_ >= s_.size() || !is_digit(s_[pos_])) fail(pos_ == begin ? "unexpected character" : "expected a digit");
    if (s_[pos_] == '0') {
      ++pos_;
      if (pos_ < s_.size() && is_digit(s_[pos_])) fail("leading zero in a number");
    } else {
      digits();
    }
    if (pos_ < s_.size() && s_[pos_] == '.') {
      ++pos_;
      if (digits() == 0) fail("expected a digit after '.'");
    }
    if (pos_ < s_.size() && (s_[pos_] == 'e' || s_[pos_] == 'E')) {
      ++pos_;
      if (pos_ < s_.size() && (s_[pos_] == '+' || s_[pos_] == '-')) ++pos_;
      if (digits() == 0) fail("expected a digit in the exponent");
    }
    const std::string literal = s_.substr(begin, pos_ - begin);
    const double v = std::strtod(literal.c_str(), nullptr);
    if (!std::isfinite(v)) {
      pos_ = begin;
      fail("number " + literal + " is beyond the double range");
    }
    return v;
  }
  void object(JsonValue& v, int depth) {
    v.kind = JsonValue::Kind::kObject;
    if (eat('}')) return;
    std::unordered_set<std::string> seen;
    do {
      skip();
      const size_t key_at = pos_;
      std::string k = string_literal();
      if (!seen.insert(k).second) {
        pos_ = key_at;
        fail("repeated key " + json_quote(k));
      }
      if (!eat(':')) fail("expected ':'");
      v.members.emplace_back(std::move(k), value(depth + 1));
    } while (eat(','));
    if (!eat('}')) fail("expected ',' or '}'");
  }
  void array(JsonValue& v, int depth) {
    v.kind = JsonValue::Kind::kArray;
    if (eat(']')) return;
    do {
      v.items.push_back(value(depth + 1));
    } while (eat(','));
    if (!eat(']')) fail("expected ',' or ']'");
  }
  JsonValue value(int depth) {
    skip();
    if (pos_ >= s_.size()) fail("unexpected end");
    JsonValue v;
    const char c = s_[pos_];
    if (c == '{' || c == '[') {
      if (depth >= kJsonMaxDepth) fail("nesting deeper than " + std::to_string(kJsonMaxDepth));
      ++pos_;
      if (c == '{')
        object(v, depth);
      else
        array(v, depth);
    } else if (c == '"') {
      v.kind = JsonValue::Kind::kString;
      v.text = string_literal();
    } else if (word("true")) {
      v.kind = JsonValue::Kind::kBool;
      v.boolean = true;
    } else if (word("false")) {
      v.kind = JsonValue::Kind::kBool;
    } else if (word("null")) {
      v.kind = JsonValue::Kind::kNull;
    } else {
      v.number = number_literal();
      v.kind = JsonValue::Kind::kNumber;
    }
    return v;
  }

  const std::string& s_;
  const std::string& file_;
  const std::string& field_;
  size_t pos_ = 0;
};

std::string join(const std::vector<std::string>& parts, const char* separator) {
  std::string out;
  for (size_t i = 0; i < parts.size(); ++i) {
    if (i) out += separator;
    out += parts[i];
  }
  return out;
}

}  // namespace

JsonValue parse_json(const std::string& text, const std::string& file, const std::string& field) {
  return Parser(text, file, field).document();
}

std::string json_quote(const std::string& s) {
  std::string out = "\"";
  for (size_t i = 0; i < s.size();) {
    const char c = s[i];
    const size_t n = utf8_length(s, i);
    if (n == 0) {
      out += "\\ufffd";
      ++i;
      continue;
    }
    if (n > 1) {
      out.append(s, i, n);
      i += n;
      continue;
    }
    ++i;
    switch (c) {
      case '"': out += "\\\""; break;
      case '\\': out += "\\\\"; break;
      case '\b': out += "\\b"; break;
      case '\f': out += "\\f"; break;
      case '\n': out += "\\n"; break;
      case '\r': out += "\\r"; break;
      case '\t': out += "\\t"; break;
      default:
        if (static_cast<unsigned char>(c) < 0x20) {
          char buf[8];
          std::snprintf(buf, sizeof buf, "\\u%04x", static_cast<unsigned>(c));
          out += buf;
        } else {
          out += c;
        }
    }
  }
  return out + "\"";
}

std::string json_number(double v) {
  if (!std::isfinite(v)) return "null";
  char buf[40];
  for (int digits = 6; digits <= 17; ++digits) {
    std::snprintf(buf, sizeof buf, "%.*g", digits, v);
    if (std::strtod(buf, nullptr) == v) break;
  }
  return buf;
}

std::string write_json(const JsonValue& v) {
  switch (v.kind) {
    case JsonValue::Kind::kNull: return "null";
    case JsonValue::Kind::kBool: return v.boolean ? "true" : "false";
    case JsonValue::Kind::kNumber: return json_number(v.number);
    case JsonValue::Kind::kString: return json_quote(v.text);
    case JsonValue::Kind::kArray: {
      JsonArrayWriter w;
      for (const auto& item : v.items) w.add_raw(write_json(item));
      return w.str();
    }
    case JsonValue::Kind::kObject: {
      JsonObjectWriter w;
      for (const auto& [k, x] : v.members) w.add_raw(k, write_json(x));
      return w.str();
    }
  }
  return "null";
}

void JsonObjectWriter::add(const std::string& key, const std::string& value) { add_raw(key, json_quote(value)); }
void JsonObjectWriter::add(const std::string& key, double value) { add_raw(key, json_number(value)); }
void JsonObjectWriter::add(const std::string& key, bool value) { add_raw(key, value ? "true" : "false"); }
void JsonObjectWriter::add(const std::string& key, const std::vector<double>& values) {
  JsonArrayWriter a;
  for (double x : values) a.add(x);
  add(key, a);
}
void JsonObjectWriter::add(const std::string& key, const std::vector<std::string>& values) {
  JsonArrayWriter a;
  for (const auto& x : values) a.add(x);
  add(key, a);
}
void JsonObjectWriter::add(const std::string& key, const JsonObjectWriter& object) { add_raw(key, object.str()); }
void JsonObjectWriter::add(const std::string& key, const JsonArrayWriter& array) { add_raw(key, array.str()); }
void JsonObjectWriter::add_null(const std::string& key) { add_raw(key, "null"); }
void JsonObjectWriter::add_raw(const std::string& key, const std::string& json) {
  members_.push_back(json_quote(key) + ": " + json);
}
std::string JsonObjectWriter::str() const { return "{" + join(members_, ", ") + "}"; }
std::string JsonObjectWriter::str_lines() const {
  if (members_.empty()) return "{}";
  return "{\n  " + join(members_, ",\n  ") + "\n}";
}

void JsonArrayWriter::add(const std::string& value) { add_raw(json_quote(value)); }
void JsonArrayWriter::add(double value) { add_raw(json_number(value)); }
void JsonArrayWriter::add(bool value) { add_raw(value ? "true" : "false"); }
void JsonArrayWriter::add(const JsonObjectWriter& object) { add_raw(object.str()); }
void JsonArrayWriter::add(const JsonArrayWriter& array) { add_raw(array.str()); }
void JsonArrayWriter::add_null() { add_raw("null"); }
void JsonArrayWriter::add_raw(const std::string& json) { items_.push_back(json); }
std::string JsonArrayWriter::str() const { return "[" + join(items_, ", ") + "]"; }

}  // namespace recofold
