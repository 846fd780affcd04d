// SPDX-License-Identifier: Apache-2.0
// Learned-model parts of the CLI: running an unrolled model file on a measurement.
#include "learn_cli.h"

#include <algorithm>

#include "recofold/core/provenance.h"
#include "recofold/learn/model.h"

namespace recofold::cli {

ImageRecord reconstruct_unrolled_record(const Measurement& m, const std::string& model_path, std::string* warning) {
  UnrolledModel model = UnrolledModel::load(model_path);
  ImageC image = model.reconstruct(m, model_path);
  if (warning) {
    const std::string outside = model.outside_training(m);
    *warning = outside.empty() ? "" : "measurement outside the training conditions of " + model_path + ": " + outside;
  }
  ImageRecord rec;
  rec.pixels = NdArray<cfloat>(Shape{image.rows(), image.cols()});
  std::copy(image.data(), image.data() + image.size(), rec.pixels.ptr());
  rec.is_complex = m.modality == Modality::kMri;
  rec.pixel_spacing_mm[0] = m.pixel_spacing_mm[0];
  rec.pixel_spacing_mm[1] = m.pixel_spacing_mm[1];
  rec.description = "unrolled reconstruction (" + model.architecture().describe() + ")";
  rec.text_attrs["method"] = "unrolled";
  rec.text_attrs["model"] = model_path;
  rec.text_attrs["model_checksum"] = file_checksum(model_path);
  rec.text_attrs["model_architecture"] = model.architecture().to_json();
  if (warning && !warning->empty()) rec.text_attrs["warning"] = *warning;
  return rec;
}

}  // namespace recofold::cli
