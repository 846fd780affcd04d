// SPDX-License-Identifier: Apache-2.0
// Pictures of any array in a recofold HDF5 file for `convert`: a named dataset
// (k-space, sinogram, coil maps, masks) read as an image, shown in decibels,
// and a stack tiled into one montage.
#pragma once

#include <string>

#include "recofold/core/image_record.h"

namespace recofold::cli {

// The dataset `dataset` of the HDF5 file `file` as an image record: rank 2
// [ny, nx] or rank 3 [count, ny, nx], real or complex (other types are
// converted). InputError(file, dataset, ...) when it is missing, a group, of
// another rank, or non-Cartesian k-space [C, M] (not a picture).
ImageRecord read_dataset_image(const std::string& file, const std::string& dataset);

// Magnitudes in decibels relative to the largest, 20 log10(|v| / max |v|),
// clamped below at floor_db (< 0); all-zero data stay at floor_db.
void to_decibels(ImageRecord& rec, double floor_db);

// A stack [count, ny, nx] as one image: ceil(sqrt(count)) tiles per row, in
// order, separated by `gap` pixels of the smallest value (unused tiles too).
ImageRecord montage(const ImageRecord& rec, Index gap = 2);

}  // namespace recofold::cli
