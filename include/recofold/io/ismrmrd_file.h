// SPDX-License-Identifier: Apache-2.0
// Raw k-space in the open ISMRMRD format (Inati et al., MRM 77, 2017), read and
// written through Debian's libismrmrd: Cartesian 2-D acquisitions in, recofold
// MRI measurements out.
//
// What is read (an ISMRMRD HDF5 file, group /dataset by default):
//   /dataset/xml      the XML header: encoding[0] gives the encoded matrix
//                     (ex, ey, ez) and field of view, the reconstruction
//                     matrix and field of view, the encoding limits and the
//                     trajectory; acquisitionSystemInformation and
//                     measurementInformation go into the provenance.
//   /dataset/data     the acquisitions: header (flags, encoding counters,
//                     channels, samples, center_sample, discard_pre/post,
//                     sample_time_us) and samples [channels][samples].
// Acquisitions flagged as noise measurements are collected for the noise
// covariance (pre-whitening, acquire/raw_import.h); navigator, phase-correction,
// dummy-scan, feedback, surface-coil-correction, phase-stabilisation and
// separate parallel-calibration lines are skipped and counted. Imaging lines
// of the selected slice, contrast, repetition, phase and set are placed by
// their counter kspace_encode_step_1 (shifted so that the limit's `center`
// lands on row ey/2) and their samples by center_sample (sample
// center_sample lands on column ex/2); reversed lines are flipped; repeated
// lines (averages, or the same counters twice) are averaged, or one average
// is kept.
//
// What is refused (InputError naming the file and the dataset or field):
// no /dataset/xml header, an XML header that does not parse or has no
// encoding, 3-D encoding (ez > 1), a non-Cartesian or EPI trajectory (stated
// as such), encoding limits that do not fit the encoded matrix, a line or
// sample outside the encoded matrix, zero acquisitions, acquisitions whose
// numbers of active channels differ ("mixed coil counts"), a selected slice /
// contrast / repetition / average that the file does not have.
#pragma once

#include <string>
#include <vector>

#include "recofold/core/measurement.h"
#include "recofold/core/raw_kspace.h"

namespace recofold {

// Which part of a multi-dimensional raw file to import. Errors name these
// fields ("slice", "average", ...).
struct IsmrmrdSelection {
  int slice = 0;       // encoding counter `slice` (>= 0)
  int contrast = 0;    // encoding counter `contrast`, e.g. the echo (>= 0)
  int repetition = 0;  // encoding counter `repetition` (>= 0)
  int phase = 0;       // encoding counter `phase`, e.g. the cardiac phase (>= 0)
  int set = 0;         // encoding counter `set` (>= 0)
  int average = -1;    // encoding counter `average`; -1 = the mean of all averages
  std::string group = "dataset";  // HDF5 group of the dataset

  // Every violation as "field = value; rule"; empty means valid.
  std::vector<std::string> validate() const;
};

// True if `path` is an HDF5 file with an ISMRMRD header (`group`/xml).
bool is_ismrmrd_file(const std::string& path, const std::string& group = "dataset");

// Reads the selection of a Cartesian 2-D raw file (see the top of this file).
// Throws InputError(path, dataset or field, reason) for every refusal above.
RawCartesian read_ismrmrd_file(const std::string& path, const IsmrmrdSelection& selection = {});

// Writes an MRI measurement as ISMRMRD raw data, atomically: an XML header
// (encoded = reconstruction matrix [nx, ny, 1], field of view = grid x pixel
// spacing, encoding limits of the lines, Cartesian trajectory, the receiver
// channels, user parameters "recofold.noise_sigma" (and its full-precision
// text "recofold.noise_sigma_text") and the research-use line)
// and one acquisition per sampled k-space row with all coils, counters
// kspace_encode_step_1 = row and the first/last-in-slice flags. Coil maps and
// truth are not part of raw data and are not written. Re-reading the file
// gives the same k-space and mask. A mask that samples single points rather
// than whole rows cannot be stored as Cartesian readout lines: InputError(
// source, "/mri/mask", ...). Non-MRI measurements: InputError. I/O failure:
// WorkError.
void write_ismrmrd_file(const std::string& path, const Measurement& m, const std::string& source = "");

}  // namespace recofold
