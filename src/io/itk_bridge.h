// SPDX-License-Identifier: Apache-2.0
// Private bridge to ITK in plain C++ types: ITK bundles its own Eigen, which
// must not meet the system Eigen of recofold/core/types.h in one translation
// unit, so itk_bridge.cc includes ITK and nothing that includes Eigen.
#pragma once

#include <cstddef>
#include <cstdint>
#include <functional>
#include <map>
#include <string>
#include <vector>

namespace recofold::internal {

// A grey image in ITK order: size[0] = x (fastest in memory), size[1] = y, size[2] = z.
struct PlainImage {
  std::vector<size_t> size;     // 2 or 3 entries
  std::vector<double> spacing;  // same length as size, mm
  std::vector<float> values;    // product(size) values, x fastest
};

// True if itk_read handles the (lower-cased) extension: .nii.gz .nii .mha .nrrd
// (ITK) and .png (libpng, png_reader.h).
bool itk_handles(const std::string& ext);

// Writes float32 pixels to `file_name` (whose extension picks NIfTI/MetaImage/NRRD).
// `target` names the final file in error messages. Before writing, the free
// space of the folder is checked; after writing, the file is read back and
// compared with `img` (sizes and every value), so a truncated or short file is
// an error and never reported as written. Throws WorkError.
void itk_write_float(const std::string& file_name, const std::string& target, const std::string& ext,
                     const PlainImage& img);

// Called by itk_read once the header is known and before any pixel is
// allocated: `size` in ITK order (x first), the number of components and the
// bytes of one component. May throw to refuse the image (size limits).
using HeaderCheck = std::function<void(const std::vector<size_t>& size, unsigned components, size_t component_bytes)>;

// Reads a 2-D or 3-D grey (or RGB/RGBA → luminance) image as float. The data
// length is checked against the header (NIfTI, MetaImage and NRRD, raw or
// gzip-compressed): a short file is refused, never padded with zeros.
// Throws InputError naming `path`; library messages are reduced to one line.
PlainImage itk_read(const std::string& path, const std::string& ext, const HeaderCheck& check = {});

// DICOM through ITK's GDCM image IO (implemented in itk_dicom.cc, the only
// translation unit with the GDCM headers). `path` is one DICOM file (single-
// or multi-frame) or a folder holding one series (files ordered by ITK's
// GDCM series file names: by image position along the slice normal). Pixel
// values are the stored values times the rescale slope plus the rescale
// intercept (0028,1053 / 0028,1052; 1 and 0 when absent); spacing from Pixel
// Spacing (0028,0030: row spacing dy, column spacing dx). A file without
// pixel data (7FE0,0010), a folder with no or several series, and unreadable
// files throw InputError naming the file or folder.
struct DicomInfo {
  double rescale_slope = 1.0, rescale_intercept = 0.0;
  std::string modality;  // (0008,0060), e.g. "CT", "MR"
  size_t files = 0;      // files read
};
PlainImage itk_read_dicom(const std::string& path, DicomInfo& info, const HeaderCheck& check = {});

// True for a folder, or a file named .dcm/.dicom/.ima, or any file with the
// DICOM preamble ("DICM" at byte 128).
bool looks_like_dicom(const std::string& path);

// Writes a 2-D image as a DICOM file (Secondary Capture, ITK's GDCM writer):
// int16 stored values with rescale slope and intercept chosen to span the
// image's range (round((v - intercept) / slope)), the spacing from
// `img.spacing` (GDCM stores it where Secondary Capture keeps it: Nominal
// Scanned Pixel Spacing, 0018,2010), and `comment` in Image Comments
// (0020,4000). Throws WorkError.
void itk_write_dicom(const std::string& file_name, const std::string& target, const PlainImage& img,
                     const std::string& comment);

// Bytes free for an unprivileged writer in the folder of `path`; -1 if unknown.
long long free_bytes_near(const std::string& path);

}  // namespace recofold::internal
