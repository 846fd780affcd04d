// SPDX-License-Identifier: Apache-2.0
// Shapes and finiteness checks.
#include "recofold/core/checks.h"

#include <cmath>

#include "recofold/core/error.h"

namespace recofold {

Index Shape::size() const {
  Index n = 1;
  for (Index d : dims) n *= d;
  return n;
}

std::string Shape::to_string() const {
  std::string s = "[";
  for (size_t i = 0; i < dims.size(); ++i) s += (i ? ", " : "") + std::to_string(dims[i]);
  return s + "]";
}

namespace {
template <typename T>
void finite_impl(const T* d, Index n, const std::string& file, const std::string& field) {
  for (Index i = 0; i < n; ++i) {
    using std::isfinite;
    bool ok;
    if constexpr (std::is_same_v<T, cfloat>)
      ok = std::isfinite(d[i].real()) && std::isfinite(d[i].imag());
    else
      ok = std::isfinite(d[i]);
    if (!ok)
      throw InputError(file, field,
                       "contains a non-finite value (NaN or Inf) at flat index " + std::to_string(i) +
                           "; all values must be finite");
  }
}
}  // namespace

void require_finite(const float* d, Index n, const std::string& f, const std::string& k) { finite_impl(d, n, f, k); }
void require_finite(const cfloat* d, Index n, const std::string& f, const std::string& k) { finite_impl(d, n, f, k); }
void require_finite(const double* d, Index n, const std::string& f, const std::string& k) { finite_impl(d, n, f, k); }

void require_shape(const Shape& got, const Shape& expected, const std::string& file, const std::string& field) {
  if (got != expected)
    throw InputError(file, field, "shape " + got.to_string() + ", expected " + expected.to_string());
}

void require_rank(const Shape& got, int min_rank, int max_rank, const std::string& file, const std::string& field) {
  if (got.rank() < min_rank || got.rank() > max_rank) {
    const std::string want = min_rank == max_rank ? std::to_string(min_rank)
                                                  : std::to_string(min_rank) + " to " + std::to_string(max_rank);
    throw InputError(file, field, "rank " + std::to_string(got.rank()) + " (shape " + got.to_string() +
                                      "), expected rank " + want);
  }
}

}  // namespace recofold
