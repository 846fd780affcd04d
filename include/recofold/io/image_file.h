// SPDX-License-Identifier: Apache-2.0
// The image file (also the phantom file and the reconstruction output).
//
// Layout (HDF5):
//   /                   attrs research_use_only = 1 (int64), producer (string)
//   /image              float32, or complex64 as {r,i} compound; shape [ny, nx]
//                       or a stack [count, ny, nx]; attrs:
//                         pixel_spacing_mm  float64[2]  (dy, dx)
//                         description       string
//                         research_use_only int64 = 1
//                         producer          string
//                         plus the record's `text_attrs` / `number_attrs`
//   <table path>        float64 [rows, columns] per entry of `tables`
//                       (e.g. /phantom/components, /recon/history), attr
//                       `columns` (comma-separated names) and the table's own attrs
//   /provenance         attrs producer, command, created_utc and every extra entry
//
// Readers require /image, rank 2 or 3, non-empty, finite values.
#pragma once

#include <map>
#include <string>
#include <vector>

#include "recofold/core/provenance.h"
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

// Writes atomically (temporary file, rename). Throws WorkError on I/O failure.
void write_image_file(const std::string& path, const ImageRecord& rec, const Provenance& prov);
// Reads and validates; InputError names the file and dataset on any problem.
ImageRecord read_image_file(const std::string& path);
// Reads the /provenance group of any recofold file (empty record if absent).
Provenance read_provenance(const std::string& path);

}  // namespace recofold
