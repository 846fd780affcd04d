// SPDX-License-Identifier: Apache-2.0
// Array aliases, shapes and the small n-dimensional array used at file and API boundaries.
#pragma once

#include <Eigen/Core>

#include <complex>
#include <cstdint>
#include <initializer_list>
#include <string>
#include <vector>

namespace recofold {

using cfloat = std::complex<float>;
using cdouble = std::complex<double>;
using Index = Eigen::Index;

// Flat vectors handed to operators, priors and solvers. Operators own the shapes.
using VecC = Eigen::VectorXcf;
using VecF = Eigen::VectorXf;
using VecD = Eigen::VectorXd;

// 2-D images, row-major so that element (row iy, column ix) sits at iy*nx + ix,
// the same layout as the HDF5 files and numpy.
using ImageF = Eigen::Array<float, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
using ImageC = Eigen::Array<cfloat, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
using ImageD = Eigen::Array<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

// Shape of a row-major array, slowest axis first ([coils, ny, nx], [views, detectors]).
struct Shape {
  std::vector<Index> dims;

  Shape() = default;
  Shape(std::initializer_list<Index> d) : dims(d) {}
  explicit Shape(std::vector<Index> d) : dims(std::move(d)) {}

  int rank() const { return static_cast<int>(dims.size()); }
  Index operator[](int axis) const { return dims.at(static_cast<size_t>(axis)); }
  // Number of elements (1 for rank 0).
  Index size() const;
  // "[8, 256, 256]"
  std::string to_string() const;
  bool operator==(const Shape& o) const { return dims == o.dims; }
  bool operator!=(const Shape& o) const { return dims != o.dims; }
};

// Row-major n-dimensional array with owned storage; the exchange type of io and
// of stacks (phantom families [count, ny, nx], multi-coil data [coils, ny, nx]).
template <typename T>
struct NdArray {
  Shape shape;
  std::vector<T> data;

  NdArray() = default;
  explicit NdArray(Shape s, T fill = T{}) : shape(std::move(s)), data(static_cast<size_t>(shape.size()), fill) {}

  Index size() const { return static_cast<Index>(data.size()); }
  T* ptr() { return data.data(); }
  const T* ptr() const { return data.data(); }
};

// Views of a 2-D slice of an NdArray (or any buffer) as an Eigen row-major image.
using ImageFMap = Eigen::Map<ImageF>;
using ImageCMap = Eigen::Map<ImageC>;
using ConstImageFMap = Eigen::Map<const ImageF>;
using ConstImageCMap = Eigen::Map<const ImageC>;

}  // namespace recofold
