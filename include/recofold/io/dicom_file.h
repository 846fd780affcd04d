// SPDX-License-Identifier: Apache-2.0
// DICOM images as recofold image records (ITK's GDCM reader and writer), for
// `convert` and as objects of simulations and studies.
//
// Reading: one DICOM file (single- or multi-frame) or a folder holding one
// series. Values are the stored values times the rescale slope plus the
// rescale intercept (0028,1053 / 0028,1052), so CT images come out in
// Hounsfield units and MR images in their stored units; a 2-D file gives
// [ny, nx], a series or a multi-frame file [nz, ny, nx] (row 0 = the first
// stored row); pixel_spacing_mm = (row spacing, column spacing) from Pixel
// Spacing (0028,0030). The record's number attributes carry rescale_slope,
// rescale_intercept and dicom_files, its text attribute dicom_modality; no
// patient or study attribute is copied. Refused with InputError naming the
// file or folder: a missing path, a file that is not DICOM, a DICOM object
// without pixel data (7FE0,0010), colour pixels, a folder with no series or
// with several series, non-finite values.
//
// Writing: one 2-D image as a Secondary Capture file, int16 stored values with
// a rescale slope and intercept that span the image's range (so the values
// come back within half a slope step), the record's spacing (in Nominal
// Scanned Pixel Spacing, 0018,2010, where Secondary Capture keeps it; read
// back by read_dicom), and the research-use line in Image Comments
// (0020,4000). Complex images: magnitude.
#pragma once

#include <string>

#include "recofold/core/image_record.h"

namespace recofold {

// True for a folder, a .dcm/.dicom/.ima file, or any file with the DICOM
// preamble ("DICM" at byte 128).
bool is_dicom_input(const std::string& path);

ImageRecord read_dicom(const std::string& path);

// Atomic; a stack of more than one image → InputError(path, "", ...); I/O failure → WorkError.
void write_dicom(const std::string& path, const ImageRecord& rec);

}  // namespace recofold
