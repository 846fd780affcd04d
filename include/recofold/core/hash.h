// SPDX-License-Identifier: Apache-2.0
// The one FNV-1a hash (64-bit): keys, seeds, config hashes and file checksums.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>

namespace recofold {

// FNV-1a 64-bit (Fowler, Noll, Vo; offset basis 14695981039346656037, prime
// 1099511628211) of a byte range, continuing from `state` (pass the result of
// a previous call to hash data in pieces).
constexpr uint64_t kFnv1aOffsetBasis = 0xcbf29ce484222325ull;  // 14695981039346656037
uint64_t fnv1a(const void* data, size_t size, uint64_t state = kFnv1aOffsetBasis);
uint64_t fnv1a(const std::string& text);
// 16 lower-case hex digits.
std::string hex16(uint64_t v);
std::string fnv1a_hex(const std::string& text);

}  // namespace recofold
