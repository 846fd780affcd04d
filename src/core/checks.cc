// SPDX-License-Identifier: Apache-2.0
// Shapes, finiteness checks and the size limits applied before allocation.
#include "recofold/core/checks.h"

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <sstream>

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

uint64_t available_memory_bytes() {
  std::ifstream in("/proc/meminfo");
  std::string key;
  uint64_t kb = 0;
  std::string unit;
  while (in >> key >> kb >> unit) {
    if (key == "MemAvailable:") return kb * 1024;
  }
  return uint64_t{8} << 30;
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

void require_any_nonzero(const uint8_t* data, Index n, const std::string& file, const std::string& field,
                         const std::string& what) {
  for (Index i = 0; i < n; ++i)
    if (data[i] != 0) return;
  throw InputError(file, field, "is all zero; expected " + what);
}

void require_coil_maps_nonzero(const cfloat* maps, Index coils, Index pixels_per_coil, const std::string& file,
                               const std::string& field) {
  for (Index c = 0; c < coils; ++c) {
    bool any = false;
    for (Index i = 0; i < pixels_per_coil && !any; ++i) any = maps[c * pixels_per_coil + i] != cfloat(0.f, 0.f);
    if (!any)
      throw InputError(file, field, coils == 1 ? std::string("the coil map is all zero; expected a sensitivity map")
                                               : "the map of coil " + std::to_string(c) +
                                                     " is all zero; expected a sensitivity map for every coil");
  }
}

uint64_t memory_budget_bytes() {
  uint64_t budget = available_memory_bytes() / 2;
  if (const char* cap = std::getenv("RECOFOLD_MEMORY_LIMIT_MB")) {
    char* end = nullptr;
    const double mb = std::strtod(cap, &end);
    if (end != cap && std::isfinite(mb) && mb > 0) budget = std::min<uint64_t>(budget, static_cast<uint64_t>(mb * 1e6));
  }
  return budget;
}

std::string readable_bytes(double bytes) {
  const char* units[] = {"B", "kB", "MB", "GB", "TB", "PB", "EB"};
  int u = 0;
  while (bytes >= 1000.0 && u < 6) {
    bytes /= 1000.0;
    ++u;
  }
  char buf[32];
  std::snprintf(buf, sizeof buf, u == 0 ? "%.0f %s" : "%.3g %s", bytes, units[u]);
  return buf;
}

Index checked_element_count(const Shape& s, const std::string& file, const std::string& field) {
  Index n = 1;
  for (Index d : s.dims) {
    if (d < 0) throw InputError(file, field, "shape " + s.to_string() + " has a negative axis length");
    if (d > kMaxAxisLength)
      throw InputError(file, field, "shape " + s.to_string() + " has an axis longer than the limit of " +
                                        std::to_string(kMaxAxisLength) + " elements");
    if (d != 0 && n > kMaxArrayElements / d)
      throw InputError(file, field, "shape " + s.to_string() + " holds more than the limit of " +
                                        std::to_string(kMaxArrayElements) + " elements in one array");
    n *= d;
  }
  if (n > kMaxArrayElements)
    throw InputError(file, field, "shape " + s.to_string() + " holds more than the limit of " +
                                      std::to_string(kMaxArrayElements) + " elements in one array");
  return n;
}

void require_allocatable(const Shape& s, size_t bytes_per_element, const std::string& what, const std::string& file,
                         const std::string& field) {
  const Index n = checked_element_count(s, file, field);
  const double need = static_cast<double>(n) * static_cast<double>(bytes_per_element);
  const uint64_t budget = memory_budget_bytes();
  if (need > static_cast<double>(budget))
    throw InputError(file, field, "shape " + s.to_string() + " of " + what + " needs " + readable_bytes(need) +
                                      ", more than the memory budget of " + readable_bytes(static_cast<double>(budget)) +
                                      " (half the available memory, capped by RECOFOLD_MEMORY_LIMIT_MB)");
}

}  // namespace recofold
