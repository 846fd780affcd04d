// SPDX-License-Identifier: Apache-2.0
// Validation helpers that raise InputError with context.
#pragma once

#include <cstdint>
#include <string>

#include "recofold/core/types.h"

namespace recofold {

// Throws InputError(file, field, ...) naming the first non-finite element and its index.
void require_finite(const float* data, Index n, const std::string& file, const std::string& field);
void require_finite(const cfloat* data, Index n, const std::string& file, const std::string& field);
void require_finite(const double* data, Index n, const std::string& file, const std::string& field);

// Throws InputError when `got` differs from `expected`, stating both shapes.
void require_shape(const Shape& got, const Shape& expected, const std::string& file, const std::string& field);

// Throws InputError unless `got.rank()` is one of the allowed ranks.
void require_rank(const Shape& got, int min_rank, int max_rank, const std::string& file, const std::string& field);

// InputError(file, field, ...) when every element is zero: a sampling mask
// that samples nothing, a weight map that selects nothing. `what` says what
// was expected ("at least one sampled k-space location").
void require_any_nonzero(const uint8_t* data, Index n, const std::string& file, const std::string& field,
                         const std::string& what);

// Coil sensitivity maps [coils, ny, nx]: InputError naming the first coil whose
// map is all zero (it would receive no signal; all-zero maps reconstruct zeros).
void require_coil_maps_nonzero(const cfloat* maps, Index coils, Index pixels_per_coil, const std::string& file,
                               const std::string& field);

// ---------------------------------------------------------------- size limits
//
// Every declared shape (a dataset in an HDF5 file, an image header, a size
// flag) is checked against these limits BEFORE anything is allocated:
//   - each axis at most kMaxAxisLength (2^20) elements,
//   - one array at most kMaxArrayElements (2^31 - 1) elements (FFTW, ITK and
//     the PNG/NIfTI headers use 32-bit counts),
//   - one array at most memory_budget_bytes() bytes.
constexpr Index kMaxAxisLength = Index{1} << 20;
constexpr Index kMaxArrayElements = (Index{1} << 31) - 1;

// Bytes one array may take: half of the memory the machine has available now
// (MemAvailable of /proc/meminfo; 8 GiB when that cannot be read), and never
// more than the cap RECOFOLD_MEMORY_LIMIT_MB (environment, megabytes) when it
// is set. Half, because the work on an array needs copies of it.
uint64_t memory_budget_bytes();

// Product of `dims` with overflow checks; InputError(file, field, ...) when an
// axis is negative or above kMaxAxisLength, or the product exceeds
// kMaxArrayElements. The message states the shape.
Index checked_element_count(const Shape& s, const std::string& file, const std::string& field);

// checked_element_count, then InputError unless count * bytes_per_element fits
// memory_budget_bytes(). `what` names the element type ("float32", "complex64").
void require_allocatable(const Shape& s, size_t bytes_per_element, const std::string& what, const std::string& file,
                         const std::string& field);

// "1.5 GB", "640 kB", "12 B": a byte count for messages (decimal units).
std::string readable_bytes(double bytes);

}  // namespace recofold
