// SPDX-License-Identifier: Apache-2.0
// DICOM records (layout and rules in include/recofold/io/dicom_file.h) over the ITK bridge.
#include "recofold/io/dicom_file.h"

#include <cmath>

#include "itk_bridge.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/checks.h"
#include "recofold/core/error.h"
#include "recofold/core/provenance.h"

namespace recofold {

bool is_dicom_input(const std::string& path) { return internal::looks_like_dicom(path); }

ImageRecord read_dicom(const std::string& path) {
  internal::DicomInfo info;
  const internal::PlainImage p = internal::itk_read_dicom(
      path, info, [&path](const std::vector<size_t>& size, unsigned components, size_t component_bytes) {
        Shape s;
        for (auto it = size.rbegin(); it != size.rend(); ++it) s.dims.push_back(static_cast<Index>(*it));
        require_allocatable(s, sizeof(float) + components * component_bytes, "pixels", path, "DICOM header");
      });
  ImageRecord rec;
  const Index nx = static_cast<Index>(p.size[0]), ny = static_cast<Index>(p.size[1]);
  rec.pixels = NdArray<cfloat>(p.size.size() == 3 ? Shape{static_cast<Index>(p.size[2]), ny, nx} : Shape{ny, nx});
  for (size_t i = 0; i < rec.pixels.data.size(); ++i) rec.pixels.data[i] = cfloat(p.values[i], 0.f);
  require_finite(rec.pixels.ptr(), rec.pixels.size(), path, "pixels");
  rec.is_complex = false;
  rec.pixel_spacing_mm[0] = p.spacing[1] > 0 && std::isfinite(p.spacing[1]) ? p.spacing[1] : 1.0;
  rec.pixel_spacing_mm[1] = p.spacing[0] > 0 && std::isfinite(p.spacing[0]) ? p.spacing[0] : 1.0;
  rec.description = "imported from DICOM " + path;
  rec.number_attrs["rescale_slope"] = info.rescale_slope;
  rec.number_attrs["rescale_intercept"] = info.rescale_intercept;
  rec.number_attrs["dicom_files"] = static_cast<double>(info.files);
  if (!info.modality.empty()) rec.text_attrs["dicom_modality"] = info.modality;
  return rec;
}

void write_dicom(const std::string& path, const ImageRecord& rec) {
  const Shape& s = rec.pixels.shape;
  if (s.rank() < 2 || (s.rank() == 3 && s[0] != 1) || s.rank() > 3)
    throw InputError(path, "", "a DICOM export holds one 2-D image; this record is " + s.to_string() +
                                   " (pick one image of the stack)");
  const Index ny = s[s.rank() - 2], nx = s[s.rank() - 1];
  internal::PlainImage p;
  p.size = {static_cast<size_t>(nx), static_cast<size_t>(ny)};
  p.spacing = {rec.pixel_spacing_mm[1], rec.pixel_spacing_mm[0]};
  p.values.resize(static_cast<size_t>(nx * ny));
  for (size_t i = 0; i < p.values.size(); ++i)
    p.values[i] = rec.is_complex ? std::abs(rec.pixels.data[i]) : rec.pixels.data[i].real();
  AtomicFile out(path);
  internal::itk_write_dicom(out.temp_path() + ".dcm", path, p, kResearchUseLine);
  if (std::rename((out.temp_path() + ".dcm").c_str(), out.temp_path().c_str()) != 0) {
    std::remove((out.temp_path() + ".dcm").c_str());
    throw WorkError("cannot write " + path + ": rename of the temporary file failed");
  }
  out.commit();
}

}  // namespace recofold
