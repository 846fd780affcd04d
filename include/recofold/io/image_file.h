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

#include <string>

#include "recofold/core/image_record.h"
#include "recofold/core/provenance.h"

namespace recofold {


// Writes atomically (temporary file, rename). Throws WorkError on I/O failure.
void write_image_file(const std::string& path, const ImageRecord& rec, const Provenance& prov);
// Reads and validates; InputError names the file and dataset on any problem.
ImageRecord read_image_file(const std::string& path);
// Reads the /provenance group of any recofold file (empty record if absent).
Provenance read_provenance(const std::string& path);

}  // namespace recofold
