// SPDX-License-Identifier: Apache-2.0
// Sampling mask files (layout in mask_file.h).
#include "recofold/io/mask_file.h"

#include <cmath>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/io/h5_file.h"
#include "recofold/io/image_export.h"

namespace recofold {

void write_mask_file(const std::string& path, const SamplingMask& m, const Provenance& prov) {
  H5Writer w(path);
  w.write("/mask", m.mask);
  w.write_attr("/mask", "pattern", m.pattern);
  w.write_attr("/mask", "requested_acceleration", m.requested_acceleration);
  w.write_attr("/mask", "achieved_acceleration", m.achieved_acceleration);
  w.write_attr("/mask", "samples", static_cast<int64_t>(m.samples));
  w.write_attr("/mask", "seed", static_cast<int64_t>(m.seed));
  w.write_attr("/mask", "center_rows", static_cast<int64_t>(m.center_rows));
  w.write_attr("/mask", "center_cols", static_cast<int64_t>(m.center_cols));
  w.write_attr("/mask", "research_use_only", int64_t{1});
  for (const auto& [k, v] : m.numbers) w.write_attr("/mask", k, v);
  if (!m.spoke_angles_rad.empty()) {
    NdArray<double> a(Shape{static_cast<Index>(m.spoke_angles_rad.size())});
    a.data = m.spoke_angles_rad;
    w.write("/spoke_angles_rad", a);
  }
  w.write_attr("/provenance", "producer", prov.producer);
  w.write_attr("/provenance", "command", prov.command);
  w.write_attr("/provenance", "created_utc", prov.created_utc);
  for (const auto& [k, v] : prov.extra) w.write_attr("/provenance", k, v);
  w.commit();
}

SamplingMask read_mask_file(const std::string& path, const std::string& field) {
  if (!file_exists(path)) throw InputError(path, field, not_a_file_reason(path));
  const std::string ext = file_extension(path);
  if (ext == ".h5") {
    H5Reader r(path);
    std::string dataset;
    for (const char* d : {"/mask", "/mri/mask", "/image"})
      if (r.has(d) && !r.is_group(d)) {
        dataset = d;
        break;
      }
    if (dataset.empty())
      throw InputError(path, field, "no /mask, /mri/mask or /image dataset (expected a mask, measurement or image file)");
    if (r.is_complex(dataset)) throw InputError(path, dataset, "a mask must be real (0/1), found complex data");
    SamplingMask m = mask_from_values(r.read_float(dataset), path, dataset);
    if (dataset == "/mask") {
      if (r.has_attr("/mask", "pattern")) m.pattern = r.attr_string("/mask", "pattern");
      if (r.has_attr("/mask", "requested_acceleration"))
        m.requested_acceleration = r.attr_double("/mask", "requested_acceleration");
      if (r.has_attr("/mask", "seed")) m.seed = static_cast<uint64_t>(r.attr_int("/mask", "seed"));
      if (r.has("/spoke_angles_rad")) m.spoke_angles_rad = r.read_double("/spoke_angles_rad").data;
    } else if (dataset == "/mri/mask" && r.has("/mri/spoke_angles_rad")) {
      m.spoke_angles_rad = r.read_double("/mri/spoke_angles_rad").data;
    }
    return m;
  }
  if (!is_image_extension(ext))
    throw InputError(path, field, "unsupported mask file extension '" + ext + "' (expected .h5 or an image such as .png)");
  const ImageRecord rec = read_image_any(path);
  if (rec.pixels.shape.rank() != 2) throw InputError(path, field, "a mask image must be 2-D, got " + rec.pixels.shape.to_string());
  NdArray<float> v(rec.pixels.shape);
  for (size_t i = 0; i < v.data.size(); ++i) v.data[i] = std::abs(rec.pixels.data[i]);
  return mask_from_values(v, path, field);
}

}  // namespace recofold
