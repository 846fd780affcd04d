// SPDX-License-Identifier: Apache-2.0
// Private bridge to ITK in plain C++ types: ITK bundles its own Eigen, which
// must not meet the system Eigen of recofold/core/types.h in one translation
// unit, so itk_bridge.cc includes ITK and nothing that includes Eigen.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

namespace recofold::internal {

// A grey image in ITK order: size[0] = x (fastest in memory), size[1] = y, size[2] = z.
struct PlainImage {
  std::vector<size_t> size;     // 2 or 3 entries
  std::vector<double> spacing;  // same length as size, mm
  std::vector<float> values;    // product(size) values, x fastest
};

// True if ITK handles the (lower-cased) extension: .nii.gz .nii .mha .nrrd .png.
bool itk_handles(const std::string& ext);

// Writes float32 pixels to `file_name` (whose extension picks NIfTI/MetaImage/NRRD).
// `target` names the final file in error messages. Throws WorkError.
void itk_write_float(const std::string& file_name, const std::string& target, const std::string& ext,
                     const PlainImage& img);

// Writes an 8-bit (levels <= 255) or 16-bit grey PNG of nx x ny levels, row 0 on top. Throws WorkError.
void itk_write_png(const std::string& file_name, const std::string& target, size_t nx, size_t ny,
                   const std::vector<uint16_t>& levels, int bits);

// Reads a 2-D or 3-D grey (or RGB/RGBA → luminance) image as float. Throws InputError naming `path`.
PlainImage itk_read(const std::string& path, const std::string& ext);

}  // namespace recofold::internal
