// SPDX-License-Identifier: Apache-2.0
// Image record (pixels + spacing + attributes + tables); file layout in io/image_file.h.
#pragma once

#include <map>
#include <string>
#include <vector>

#include "recofold/core/types.h"

namespace recofold {

// A small numeric table stored as float64 [rows, columns].
struct Table {
  std::vector<std::string> columns;
  NdArray<double> rows;                          // shape [n, columns.size()]
  std::map<std::string, double> number_attrs;    // e.g. fov_mm
  std::map<std::string, std::string> text_attrs;  // e.g. name, type legend
};

struct ImageRecord {
  NdArray<cfloat> pixels;       // [ny, nx] or [count, ny, nx]
  bool is_complex = false;      // false: written as float32 (imaginary parts dropped)
  double pixel_spacing_mm[2] = {1.0, 1.0};  // (dy, dx)
  std::string description;
  std::map<std::string, std::string> text_attrs;  // extra attributes on /image
  std::map<std::string, double> number_attrs;
  std::map<std::string, Table> tables;  // absolute HDF5 path -> table
};

}  // namespace recofold
