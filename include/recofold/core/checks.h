// SPDX-License-Identifier: Apache-2.0
// Validation helpers that raise InputError with context.
#pragma once

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

}  // namespace recofold
