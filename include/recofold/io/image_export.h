// SPDX-License-Identifier: Apache-2.0
// Image export/import in common formats (through ITK), PNG quick looks, and a
// dispatcher that picks recofold's HDF5 image file or an ITK format by extension.
//
// Formats by extension (lower-cased; see file_extension()):
//   .h5             recofold image file (image_file.h): float32 or complex64, stacks kept
//   .nii.gz, .nii   NIfTI-1, float32
//   .mha            MetaImage (header and data in one file), float32
//   .nrrd           NRRD (one file), float32
//   .png            8- or 16-bit grey, windowed (PngWindow); 2-D only
//
// Axis convention (all ITK formats): our pixel (row iy, column ix) of an
// [ny, nx] image is ITK index (ix, iy), so the file's first axis ("i", x,
// fastest in memory) runs along our columns and its second axis ("j", y)
// along our rows, row 0 first. ITK spacing is (dx, dy) = (pixel_spacing_mm[1],
// pixel_spacing_mm[0]); origin 0, direction identity. Read with nibabel,
// `img.get_fdata()` has shape (nx, ny) and equals our image transposed
// (`data[:, :].T`), and `header.get_zooms()` is (dx, dy). (ITK writes the
// NIfTI qform/sform in its LPS convention, so the affine shows -dx, -dy on the
// diagonal; values and zooms are unaffected.) A stack [count, ny, nx] becomes a
// 3-D volume (nx, ny, count) with spacing 1 along the stack. In a PNG, row 0 is
// the top line.
//
// Complex images: the ITK formats and PNG store the magnitude |z| (float32);
// only .h5 keeps complex values.
#pragma once

#include <string>
#include <vector>

#include "recofold/core/image_record.h"
#include "recofold/core/provenance.h"
#include "recofold/core/types.h"

namespace recofold {

// How image values map to PNG grey levels:
//   level = round((v - lo) / (hi - lo) * (2^bits - 1)), clipped to [0, 2^bits - 1].
struct PngWindow {
  double lo = 0.0;          // value shown black (used when auto_window is false)
  double hi = 1.0;          // value shown white (used when auto_window is false); must be > lo
  bool auto_window = true;  // true: lo = min, hi = max of the image (a constant image is all black)
  int bits = 8;             // 8 or 16 bits per pixel

  // Every violation as "png.<field> = value; rule"; empty means valid.
  std::vector<std::string> validate() const;
};

// Writes a 2-D image as a grey PNG, atomically. Invalid window → InputError(path, "png window", ...);
// I/O failure → WorkError.
void write_png(const std::string& path, const ImageF& img, const PngWindow& w);

// Writes pixels [ny, nx] or [count, ny, nx] through ITK to .nii.gz/.nii/.mha/.nrrd
// (float32; complex → magnitude), atomically. Unsupported extension → InputError.
void export_image(const std::string& path, const ImageRecord& rec);

// Reads .nii.gz/.nii/.mha/.nrrd/.png through ITK: a 2-D file gives [ny, nx], a
// 3-D file [nz, ny, nx]; values converted to float32 (PNG grey levels as
// stored, colour PNG as luminance); spacing from the file. Missing or
// unreadable files, more than 3 dimensions, multi-component pixels other than
// RGB(A), or non-finite values → InputError naming the file.
ImageRecord import_image(const std::string& path);

// Writes `rec` to `path` by extension: .h5 → write_image_file (with `prov`),
// .png → write_png (2-D or a stack of one; complex → magnitude),
// other supported extensions → export_image. Unsupported extension → InputError(path, "", ...).
void write_image_any(const std::string& path, const ImageRecord& rec, const Provenance& prov, const PngWindow& w);

// Reads an image by extension: .h5 → read_image_file, otherwise import_image.
ImageRecord read_image_any(const std::string& path);

// True for extensions write_image_any/read_image_any accept.
bool is_image_extension(const std::string& ext);

// The real image of one slice of a record: magnitude if `rec.is_complex`, else
// the real part. `index` selects the slice of a stack (0 for a 2-D image);
// out of range → InputError(file, "index", ...) (the CLI names its own flag).
ImageF image_slice(const ImageRecord& rec, Index index, const std::string& file = "");

}  // namespace recofold
