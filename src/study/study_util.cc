// SPDX-License-Identifier: Apache-2.0
// CSV fields, base64 and HTML escaping for the study module.
#include "study_util.h"

#include <cmath>
#include <cstdio>
#include <cstdlib>

namespace recofold {

std::string csv_field(const std::string& s) {
  if (s.find_first_of(",\"\n\r") == std::string::npos) return s;
  std::string out = "\"";
  for (char c : s) {
    if (c == '"') out += "\"\"";
    else if (c == '\n' || c == '\r') out += ' ';
    else out += c;
  }
  return out + "\"";
}

std::vector<std::string> csv_split(const std::string& line) {
  std::vector<std::string> out;
  std::string cur;
  bool quoted = false;
  for (size_t i = 0; i < line.size(); ++i) {
    const char c = line[i];
    if (quoted) {
      if (c == '"' && i + 1 < line.size() && line[i + 1] == '"') {
        cur += '"';
        ++i;
      } else if (c == '"') {
        quoted = false;
      } else {
        cur += c;
      }
    } else if (c == '"') {
      quoted = true;
    } else if (c == ',') {
      out.push_back(cur);
      cur.clear();
    } else {
      cur += c;
    }
  }
  out.push_back(cur);
  return out;
}

std::string base64(const std::string& bytes) {
  static const char* k = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
  std::string out;
  out.reserve((bytes.size() + 2) / 3 * 4);
  size_t i = 0;
  for (; i + 2 < bytes.size(); i += 3) {
    const uint32_t n = (uint32_t(uint8_t(bytes[i])) << 16) | (uint32_t(uint8_t(bytes[i + 1])) << 8) | uint8_t(bytes[i + 2]);
    out += k[(n >> 18) & 63];
    out += k[(n >> 12) & 63];
    out += k[(n >> 6) & 63];
    out += k[n & 63];
  }
  if (i + 1 == bytes.size()) {
    const uint32_t n = uint32_t(uint8_t(bytes[i])) << 16;
    out += k[(n >> 18) & 63];
    out += k[(n >> 12) & 63];
    out += "==";
  } else if (i + 2 == bytes.size()) {
    const uint32_t n = (uint32_t(uint8_t(bytes[i])) << 16) | (uint32_t(uint8_t(bytes[i + 1])) << 8);
    out += k[(n >> 18) & 63];
    out += k[(n >> 12) & 63];
    out += k[(n >> 6) & 63];
    out += '=';
  }
  return out;
}

std::string html_escape(const std::string& s) {
  std::string out;
  for (char c : s) {
    switch (c) {
      case '&': out += "&amp;"; break;
      case '<': out += "&lt;"; break;
      case '>': out += "&gt;"; break;
      case '"': out += "&quot;"; break;
      default: out += c;
    }
  }
  return out;
}

std::string modality_label(Modality m) {
  switch (m) {
    case Modality::kMri: return "MRI";
    case Modality::kCt: return "CT";
    case Modality::kDenoise: return "denoising";
    case Modality::kInpaint: return "inpainting";
  }
  return std::string(to_string(m));
}

std::string modality_phrase(Modality m) {
  const std::string label = modality_label(m);
  return (label == "MRI" || label == "inpainting" ? "an " : "a ") + label;
}

}  // namespace recofold
