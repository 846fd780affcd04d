// SPDX-License-Identifier: Apache-2.0
// Pictures of arrays for `convert` (picture_cli.h).
#include "picture_cli.h"

#include <algorithm>
#include <cmath>
#include <limits>

#include "recofold/core/error.h"
#include "recofold/io/h5_file.h"

namespace recofold::cli {

ImageRecord read_dataset_image(const std::string& file, const std::string& dataset) {
  const H5Reader r(file);
  if (!r.has(dataset)) throw InputError(file, dataset, "no such dataset in the file (see `recofold info " + file + "`)");
  if (r.is_group(dataset)) throw InputError(file, dataset, "is a group; name one of its datasets");
  const Shape s = r.shape(dataset);
  if (s.rank() != 2 && s.rank() != 3)
    throw InputError(file, dataset, "has shape " + s.to_string() + "; a picture needs [ny, nx] or [count, ny, nx]");
  if (s.rank() == 2 && r.has("/mri/trajectory") && dataset.rfind("/mri/kspace", 0) == 0)
    throw InputError(file, dataset,
                     "is non-Cartesian k-space [coils, points], not a picture; grid it with `recofold recon --method "
                     "zero-filled` or show /mri/coil_maps");
  ImageRecord rec;
  rec.is_complex = r.is_complex(dataset);
  rec.pixels = r.read_complex(dataset);
  rec.description = dataset + " of " + file;
  return rec;
}

void to_decibels(ImageRecord& rec, double floor_db) {
  double peak = 0.0;
  for (const cfloat& v : rec.pixels.data) peak = std::max(peak, static_cast<double>(std::abs(v)));
  for (cfloat& v : rec.pixels.data) {
    const double a = std::abs(v);
    const double db = peak > 0.0 && a > 0.0 ? 20.0 * std::log10(a / peak) : floor_db;
    v = cfloat(static_cast<float>(std::max(db, floor_db)), 0.0f);
  }
  rec.is_complex = false;
  rec.description += " (dB of the largest magnitude, floor " + std::to_string(static_cast<int>(floor_db)) + " dB)";
}

ImageRecord montage(const ImageRecord& rec, Index gap) {
  const Shape& s = rec.pixels.shape;
  const Index count = s[0], ny = s[1], nx = s[2];
  const Index cols = static_cast<Index>(std::ceil(std::sqrt(static_cast<double>(count))));
  const Index rows = (count + cols - 1) / cols;
  float lo = std::numeric_limits<float>::max();
  for (const cfloat& v : rec.pixels.data) lo = std::min(lo, rec.is_complex ? std::abs(v) : v.real());
  ImageRecord out = rec;
  out.is_complex = false;
  out.pixels = NdArray<cfloat>(Shape{rows * ny + (rows - 1) * gap, cols * nx + (cols - 1) * gap}, cfloat(lo, 0.0f));
  const Index width = out.pixels.shape[1];
  for (Index k = 0; k < count; ++k) {
    const Index top = (k / cols) * (ny + gap), left = (k % cols) * (nx + gap);
    for (Index y = 0; y < ny; ++y)
      for (Index x = 0; x < nx; ++x) {
        const cfloat v = rec.pixels.data[static_cast<size_t>((k * ny + y) * nx + x)];
        out.pixels.data[static_cast<size_t>((top + y) * width + left + x)] =
            cfloat(rec.is_complex ? std::abs(v) : v.real(), 0.0f);
      }
  }
  out.description += " (montage of " + std::to_string(count) + " images, " + std::to_string(cols) + " per row)";
  return out;
}

}  // namespace recofold::cli
