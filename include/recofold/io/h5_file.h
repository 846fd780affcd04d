// SPDX-License-Identifier: Apache-2.0
// Low-level HDF5 access behind a small facade; HDF5 types never leave src/io.
//
// Conventions of every file recofold writes:
//   - root attributes: research_use_only = 1 (int), producer (string)
//   - complex data: compound type {r: float32, i: float32} (h5py reads it as complex64)
//   - arrays are row-major, slowest axis first, like numpy
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "recofold/core/types.h"

namespace recofold {

// Writes one HDF5 file atomically: everything goes to a temporary file in the
// target folder, and commit() renames it into place. Destroying a writer
// without commit() removes the temporary file. Parent groups of dataset and
// attribute paths are created on demand. Errors throw WorkError.
class H5Writer {
 public:
  explicit H5Writer(const std::string& target);
  ~H5Writer();
  H5Writer(const H5Writer&) = delete;
  H5Writer& operator=(const H5Writer&) = delete;

  void write(const std::string& path, const NdArray<float>& a);
  void write(const std::string& path, const NdArray<double>& a);
  void write(const std::string& path, const NdArray<cfloat>& a);  // {r,i} compound
  void write(const std::string& path, const NdArray<uint8_t>& a);
  void write(const std::string& path, const NdArray<int64_t>& a);

  // Attributes on a group or dataset (created as a group if absent; "/" is the root).
  void write_attr(const std::string& object, const std::string& name, double v);
  void write_attr(const std::string& object, const std::string& name, int64_t v);
  void write_attr(const std::string& object, const std::string& name, const std::string& v);
  void write_attr(const std::string& object, const std::string& name, const std::vector<double>& v);
  void write_attr(const std::string& object, const std::string& name, const std::vector<int64_t>& v);

  // Closes the file and renames it onto the target.
  void commit();

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// Reads an HDF5 file. Opening a missing file or a file that is not HDF5 throws
// InputError naming the file; every read checks the dataset exists and has a
// usable type, and throws InputError(file, dataset path, what was expected).
class H5Reader {
 public:
  explicit H5Reader(const std::string& path);
  ~H5Reader();
  H5Reader(const H5Reader&) = delete;
  H5Reader& operator=(const H5Reader&) = delete;

  const std::string& file() const;
  // True if a dataset or group exists at `path` ("/mri/kspace").
  bool has(const std::string& path) const;
  // True if `path` is a group ("/" always is).
  bool is_group(const std::string& path) const;
  // Names of the children of a group (sorted).
  std::vector<std::string> children(const std::string& group) const;
  Shape shape(const std::string& dataset) const;
  // True for the {r,i} compound type.
  bool is_complex(const std::string& dataset) const;
  // Human-readable type: "float32", "float64", "complex64", "uint8", "int64", ...
  std::string type_name(const std::string& dataset) const;

  // Reads with conversion from any real integer/float type. Complex data is refused.
  NdArray<float> read_float(const std::string& dataset) const;
  NdArray<double> read_double(const std::string& dataset) const;
  // Reads {r,i} compounds, or real data with zero imaginary part.
  NdArray<cfloat> read_complex(const std::string& dataset) const;
  NdArray<uint8_t> read_u8(const std::string& dataset) const;
  NdArray<int64_t> read_int(const std::string& dataset) const;

  bool has_attr(const std::string& object, const std::string& name) const;
  std::vector<std::string> attr_names(const std::string& object) const;
  double attr_double(const std::string& object, const std::string& name) const;
  int64_t attr_int(const std::string& object, const std::string& name) const;
  std::string attr_string(const std::string& object, const std::string& name) const;
  std::vector<double> attr_doubles(const std::string& object, const std::string& name) const;
  // Any attribute rendered as text (for `recofold info`).
  std::string attr_as_text(const std::string& object, const std::string& name) const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace recofold
