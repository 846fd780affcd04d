// SPDX-License-Identifier: Apache-2.0
// FNV-1a 64-bit.
#include "recofold/core/hash.h"

#include <cstdio>

namespace recofold {

uint64_t fnv1a(const void* data, size_t size, uint64_t h) {
  const unsigned char* p = static_cast<const unsigned char*>(data);
  for (size_t i = 0; i < size; ++i) {
    h ^= p[i];
    h *= 1099511628211ull;
  }
  return h;
}

uint64_t fnv1a(const std::string& text) { return fnv1a(text.data(), text.size()); }

std::string hex16(uint64_t v) {
  char buf[17];
  std::snprintf(buf, sizeof buf, "%016llx", static_cast<unsigned long long>(v));
  return buf;
}

std::string fnv1a_hex(const std::string& text) { return hex16(fnv1a(text)); }

}  // namespace recofold
