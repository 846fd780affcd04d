// SPDX-License-Identifier: Apache-2.0
// Minimal JSON reading and writing for the text attributes of model files.
#include "json_text.h"

#include <cmath>
#include <cstdio>
#include <cstdlib>

#include "recofold/core/error.h"

namespace recofold::internal {

const JsonValue* JsonValue::find(const std::string& key) const {
  for (const auto& m : members)
    if (m.first == key) return &m.second;
  return nullptr;
}

namespace {

class Parser {
 public:
  Parser(const std::string& text, const std::string& file, const std::string& field)
      : s_(text), file_(file), field_(field) {}

  JsonValue document() {
    JsonValue v = value();
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
    size_t n = std::char_traits<char>::length(w);
    if (s_.compare(pos_, n, w) == 0) {
      pos_ += n;
      return true;
    }
    return false;
  }
  std::string string_literal() {
    if (!eat('"')) fail("expected a string");
    std::string out;
    while (pos_ < s_.size() && s_[pos_] != '"') {
      char c = s_[pos_++];
      if (c != '\\') {
        out += c;
        continue;
      }
      if (pos_ >= s_.size()) fail("unfinished escape");
      char e = s_[pos_++];
      switch (e) {
        case '"': out += '"'; break;
        case '\\': out += '\\'; break;
        case '/': out += '/'; break;
        case 'b': out += '\b'; break;
        case 'f': out += '\f'; break;
        case 'n': out += '\n'; break;
        case 'r': out += '\r'; break;
        case 't': out += '\t'; break;
        case 'u': {
          if (pos_ + 4 > s_.size()) fail("short \\u escape");
          unsigned code = static_cast<unsigned>(std::strtoul(s_.substr(pos_, 4).c_str(), nullptr, 16));
          pos_ += 4;
          if (code > 0x7f) fail("non-ASCII \\u escape");
          out += static_cast<char>(code);
          break;
        }
        default: fail("unknown escape");
      }
    }
    if (pos_ >= s_.size()) fail("unfinished string");
    ++pos_;
    return out;
  }
  JsonValue value() {
    skip();
    if (pos_ >= s_.size()) fail("unexpected end");
    JsonValue v;
    char c = s_[pos_];
    if (c == '{') {
      ++pos_;
      v.kind = JsonValue::Kind::kObject;
      if (eat('}')) return v;
      do {
        skip();
        std::string k = string_literal();
        if (!eat(':')) fail("expected ':'");
        v.members.emplace_back(k, value());
      } while (eat(','));
      if (!eat('}')) fail("expected '}'");
    } else if (c == '[') {
      ++pos_;
      v.kind = JsonValue::Kind::kArray;
      if (eat(']')) return v;
      do {
        v.items.push_back(value());
      } while (eat(','));
      if (!eat(']')) fail("expected ']'");
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
      const char* begin = s_.c_str() + pos_;
      char* end = nullptr;
      v.number = std::strtod(begin, &end);
      if (end == begin) fail("unexpected character");
      pos_ += static_cast<size_t>(end - begin);
      v.kind = JsonValue::Kind::kNumber;
    }
    return v;
  }

  const std::string& s_;
  const std::string& file_;
  const std::string& field_;
  size_t pos_ = 0;
};

}  // namespace

JsonValue parse_json(const std::string& text, const std::string& file, const std::string& field) {
  return Parser(text, file, field).document();
}

std::string json_quote(const std::string& s) {
  std::string out = "\"";
  for (char c : s) {
    switch (c) {
      case '"': out += "\\\""; break;
      case '\\': out += "\\\\"; break;
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
      std::string out = "[";
      for (size_t i = 0; i < v.items.size(); ++i) out += (i ? ", " : "") + write_json(v.items[i]);
      return out + "]";
    }
    case JsonValue::Kind::kObject: {
      std::string out = "{";
      for (size_t i = 0; i < v.members.size(); ++i)
        out += (i ? ", " : "") + json_quote(v.members[i].first) + ": " + write_json(v.members[i].second);
      return out + "}";
    }
  }
  return "null";
}

void JsonObjectWriter::key(const std::string& k) {
  if (!body_.empty()) body_ += ", ";
  body_ += json_quote(k) + ": ";
}
void JsonObjectWriter::add(const std::string& k, const std::string& value) {
  key(k);
  body_ += json_quote(value);
}
void JsonObjectWriter::add(const std::string& k, double value) {
  key(k);
  body_ += json_number(value);
}
void JsonObjectWriter::add(const std::string& k, long long value) {
  key(k);
  body_ += std::to_string(value);
}
void JsonObjectWriter::add(const std::string& k, bool value) {
  key(k);
  body_ += value ? "true" : "false";
}
void JsonObjectWriter::add(const std::string& k, const std::vector<double>& values) {
  key(k);
  body_ += "[";
  for (size_t i = 0; i < values.size(); ++i) body_ += (i ? ", " : "") + json_number(values[i]);
  body_ += "]";
}
void JsonObjectWriter::add(const std::string& k, const std::vector<std::string>& values) {
  key(k);
  body_ += "[";
  for (size_t i = 0; i < values.size(); ++i) body_ += (i ? ", " : "") + json_quote(values[i]);
  body_ += "]";
}
void JsonObjectWriter::add_raw(const std::string& k, const std::string& json) {
  key(k);
  body_ += json;
}

}  // namespace recofold::internal
