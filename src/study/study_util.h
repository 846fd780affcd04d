// SPDX-License-Identifier: Apache-2.0
// Small helpers shared by the study sources: hashing, number text, CSV fields, base64 (private).
#pragma once

#include <cstdint>
#include <string>
#include <vector>

namespace recofold {

// FNV-1a 64-bit of `text`, and as 16 hex digits.
uint64_t fnv1a(const std::string& text);
std::string fnv1a_hex(const std::string& text);

// Shortest round-trip-safe text of a number for keys and CSV cells ("4", "0.01", "1e+05").
std::string format_number(double v);
// Fixed significant digits (CSV metric cells, report tables).
std::string format_sig(double v, int digits);

// CSV: quote a field when it holds a comma, quote or newline; split one line.
std::string csv_field(const std::string& s);
std::vector<std::string> csv_split(const std::string& line);

// Standard base64 (RFC 4648) of bytes, for images embedded in the report.
std::string base64(const std::string& bytes);

// HTML text escaping (& < > ").
std::string html_escape(const std::string& s);

}  // namespace recofold
