// SPDX-License-Identifier: Apache-2.0
// The measurement file (layout in include/recofold/io/measurement_file.h): writer and validating reader.
#include "recofold/io/measurement_file.h"

#include <cmath>
#include <set>

#include "h5_provenance.h"
#include "recofold/core/checks.h"
#include "recofold/core/error.h"
#include "recofold/io/h5_file.h"
#include "recofold/io/trajectory_file.h"

namespace recofold {

namespace {

const std::set<std::string> kMriAttrs = {"noise_sigma", "pattern", "acceleration", "coil_maps_source"};
const std::set<std::string> kCtAttrs = {"geometry",
                                        "detector_shape",
                                        "detector_count",
                                        "detector_spacing_mm",
                                        "detector_offset_mm",
                                        "source_to_isocenter_mm",
                                        "source_to_detector_mm",
                                        "photons_per_ray",
                                        "electronic_sigma",
                                        "mu_per_mm"};

NdArray<double> to_nd(const std::vector<double>& v) {
  NdArray<double> a(Shape{static_cast<Index>(v.size())});
  for (size_t i = 0; i < v.size(); ++i) a.data[i] = v[i];
  return a;
}

// Reader helpers that name the file and the attribute.
class Checked {
 public:
  explicit Checked(const H5Reader& r) : r_(r) {}

  [[noreturn]] void bad(const std::string& field, const std::string& reason) const {
    throw InputError(r_.file(), field, reason);
  }

  double number(const std::string& object, const std::string& name, bool required, double fallback,
                double min_value) const {
    if (!r_.has_attr(object, name)) {
      if (required) bad(object, "attribute '" + name + "' is missing");
      return fallback;
    }
    const double v = r_.attr_double(object, name);
    if (!std::isfinite(v) || v < min_value)
      bad(object, "attribute '" + name + "' = " + std::to_string(v) + "; must be finite and >= " +
                      std::to_string(min_value));
    return v;
  }

  std::string text(const std::string& object, const std::string& name, bool required, const std::string& fallback,
                    const std::set<std::string>& allowed = {}) const {
    if (!r_.has_attr(object, name)) {
      if (required) bad(object, "attribute '" + name + "' is missing");
      return fallback;
    }
    const std::string v = r_.attr_string(object, name);
    if (!allowed.empty() && !allowed.count(v)) {
      std::string list;
      for (const auto& a : allowed) list += (list.empty() ? "" : ", ") + a;
      bad(object, "attribute '" + name + "' = '" + v + "'; expected one of: " + list);
    }
    return v;
  }

  // Every attribute of `object` outside `known`, split into numbers and texts.
  void extras(const std::string& object, const std::set<std::string>& known, std::map<std::string, double>& numbers,
              std::map<std::string, std::string>& texts) const {
    for (const auto& name : r_.attr_names(object)) {
      if (known.count(name)) continue;
      try {
        texts[name] = r_.attr_string(object, name);
        continue;
      } catch (const InputError&) {
      }
      try {
        const auto v = r_.attr_doubles(object, name);
        if (v.size() == 1) numbers[name] = v[0];
      } catch (const InputError&) {
      }
    }
  }

 private:
  const H5Reader& r_;
};

// The /observed group of a denoise or inpaint file.
ImageProblemData read_observed(const H5Reader& r, const Checked& c, const Shape& image_shape, Modality modality) {
  const std::string& path = r.file();
  if (!r.has("/observed")) c.bad("/observed", "group is missing (modality is " + std::string(to_string(modality)) + ")");
  ImageProblemData d;
  require_shape(r.shape("/observed/image"), image_shape, path, "/observed/image");
  if (r.is_complex("/observed/image")) c.bad("/observed/image", "is complex, expected float32");
  d.observed = r.read_float("/observed/image");
  require_finite(d.observed.ptr(), d.observed.size(), path, "/observed/image");
  require_shape(r.shape("/observed/pixel_mask"), image_shape, path, "/observed/pixel_mask");
  d.pixel_mask = r.read_u8("/observed/pixel_mask");
  Index kept = 0;
  for (Index i = 0; i < d.pixel_mask.size(); ++i) {
    const uint8_t v = d.pixel_mask.data[static_cast<size_t>(i)];
    if (v > 1)
      c.bad("/observed/pixel_mask", "value " + std::to_string(v) + " at flat index " + std::to_string(i) +
                                        "; the mask holds only 0 and 1");
    kept += v;
  }
  if (kept == 0) c.bad("/observed/pixel_mask", "keeps no pixel; expected at least one value 1");
  if (modality == Modality::kDenoise && kept != d.pixel_mask.size())
    c.bad("/observed/pixel_mask", "a denoise measurement observes every pixel; this mask keeps " +
                                      std::to_string(kept) + " of " + std::to_string(d.pixel_mask.size()));
  d.noise_sigma = c.number("/observed", "noise_sigma", true, 0.0, 0.0);
  d.pattern = c.text("/observed", "pattern", false, modality == Modality::kDenoise ? "all" : "file");
  d.kept_fraction = static_cast<double>(kept) / static_cast<double>(d.pixel_mask.size());
  return d;
}

// The /mri group: Cartesian (kspace [C, ny, nx] + mask) or non-Cartesian
// (kspace [C, M] + /mri/trajectory, no mask).
MriData read_mri(const H5Reader& r, const Checked& c, Index ny, Index nx) {
  const std::string& path = r.file();
  if (!r.has("/mri")) c.bad("/mri", "group is missing (modality is mri)");
  MriData d;
  const bool non_cartesian = r.has("/mri/trajectory");
  if (non_cartesian) {
    d.trajectory = read_trajectory_group(r, "/mri/trajectory", ny, nx);
    if (d.trajectory->dcf.empty())
      c.bad("/mri/trajectory/dcf", "dataset is missing (a measurement carries the density compensation of its "
                                   "trajectory, one weight per point)");
    if (r.has("/mri/mask"))
      c.bad("/mri/mask", "is present in a non-Cartesian measurement (/mri/trajectory lists the sampled points)");
  }
  if (!r.has("/mri/kspace")) c.bad("/mri/kspace", "dataset is missing");
  const Shape ks = r.shape("/mri/kspace");
  const Index m_points = non_cartesian ? d.trajectory->points() : 0;
  if (non_cartesian && (ks.rank() != 2 || ks[0] < 1 || ks[1] != m_points))
    c.bad("/mri/kspace", "shape " + ks.to_string() + ", expected [coils >= 1, " + std::to_string(m_points) +
                             "] (one sample per point of /mri/trajectory/k)");
  if (!non_cartesian) {
    require_rank(ks, 3, 3, path, "/mri/kspace");
    if (ks[0] < 1 || ks[1] != ny || ks[2] != nx)
      c.bad("/mri/kspace", "shape " + ks.to_string() + ", expected [coils >= 1, " + std::to_string(ny) + ", " +
                               std::to_string(nx) + "] (image_shape)");
  }
  if (!r.is_complex("/mri/kspace")) c.bad("/mri/kspace", "type " + r.type_name("/mri/kspace") + ", expected complex64");
  d.kspace = r.read_complex("/mri/kspace");
  require_finite(d.kspace.ptr(), d.kspace.size(), path, "/mri/kspace");
  if (!non_cartesian) {
    require_shape(r.shape("/mri/mask"), Shape{ny, nx}, path, "/mri/mask");
    d.mask = r.read_u8("/mri/mask");
    for (Index i = 0; i < d.mask.size(); ++i)
      if (d.mask.data[static_cast<size_t>(i)] > 1)
        c.bad("/mri/mask", "value " + std::to_string(d.mask.data[static_cast<size_t>(i)]) + " at flat index " +
                               std::to_string(i) + "; the mask holds only 0 and 1");
    require_any_nonzero(d.mask.ptr(), d.mask.size(), path, "/mri/mask",
                        "at least one sampled k-space location (value 1)");
  }
  const Shape maps_shape{ks[0], ny, nx};
  require_shape(r.shape("/mri/coil_maps"), maps_shape, path, "/mri/coil_maps");
  d.coil_maps = r.read_complex("/mri/coil_maps");
  require_finite(d.coil_maps.ptr(), d.coil_maps.size(), path, "/mri/coil_maps");
  require_coil_maps_nonzero(d.coil_maps.ptr(), ks[0], ny * nx, path, "/mri/coil_maps");
  if (r.has("/mri/spoke_angles_rad")) {
    const NdArray<double> a = r.read_double("/mri/spoke_angles_rad");
    require_rank(a.shape, 1, 1, path, "/mri/spoke_angles_rad");
    require_finite(a.ptr(), a.size(), path, "/mri/spoke_angles_rad");
    d.spoke_angles_rad = a.data;
  }
  d.noise_sigma = c.number("/mri", "noise_sigma", true, 0.0, 0.0);
  d.pattern = c.text("/mri", "pattern", false, "");
  d.acceleration = c.number("/mri", "acceleration", false, 1.0, 0.0);
  d.coil_maps_source = c.text("/mri", "coil_maps_source", false, "synthetic");
  c.extras("/mri", kMriAttrs, d.numbers, d.texts);
  return d;
}

}  // namespace

void write_measurement_file(const std::string& path, const Measurement& m) {
  const std::string modality(to_string(m.modality));
  const bool image_problem = m.modality == Modality::kDenoise || m.modality == Modality::kInpaint;
  if ((m.modality == Modality::kMri) != m.mri.has_value() || (m.modality == Modality::kCt) != m.ct.has_value() ||
      image_problem != m.image.has_value())
    throw WorkError("cannot write " + path + ": modality '" + modality + "' does not match the data present");
  H5Writer w(path);
  w.write_attr("/", "modality", modality);
  w.write_attr("/", "image_shape", std::vector<int64_t>{static_cast<int64_t>(m.ny), static_cast<int64_t>(m.nx)});
  w.write_attr("/", "pixel_spacing_mm", std::vector<double>{m.pixel_spacing_mm[0], m.pixel_spacing_mm[1]});
  if (m.mri) {
    const MriData& d = *m.mri;
    w.write("/mri/kspace", d.kspace);
    if (d.trajectory) {
      const Index m_points = d.trajectory->points();
      if (d.kspace.shape.rank() != 2 || d.kspace.shape[1] != m_points ||
          static_cast<Index>(d.trajectory->dcf.size()) != m_points)
        throw WorkError("cannot write " + path + ": non-Cartesian k-space " + d.kspace.shape.to_string() +
                        " or its " + std::to_string(d.trajectory->dcf.size()) + " weights do not match the " +
                        std::to_string(m_points) + " trajectory points");
      write_trajectory_group(w, "/mri/trajectory", *d.trajectory);
    } else {
      w.write("/mri/mask", d.mask);
    }
    w.write("/mri/coil_maps", d.coil_maps);
    if (!d.spoke_angles_rad.empty()) w.write("/mri/spoke_angles_rad", to_nd(d.spoke_angles_rad));
    w.write_attr("/mri", "noise_sigma", d.noise_sigma);
    w.write_attr("/mri", "pattern", d.pattern);
    w.write_attr("/mri", "acceleration", d.acceleration);
    w.write_attr("/mri", "coil_maps_source", d.coil_maps_source);
    internal::write_attr_maps(w, "/mri", d.numbers, d.texts);
  }
  if (m.ct) {
    const CtData& d = *m.ct;
    w.write("/ct/sinogram", d.sinogram);
    w.write("/ct/angles_rad", to_nd(d.angles_rad));
    w.write_attr("/ct", "geometry", std::string(to_string(d.beam)));
    w.write_attr("/ct", "detector_shape", std::string(to_string(d.detector_shape)));
    w.write_attr("/ct", "detector_count", d.detector_count);
    w.write_attr("/ct", "detector_spacing_mm", d.detector_spacing_mm);
    w.write_attr("/ct", "detector_offset_mm", d.detector_offset_mm);
    w.write_attr("/ct", "source_to_isocenter_mm", d.source_to_isocenter_mm);
    w.write_attr("/ct", "source_to_detector_mm", d.source_to_detector_mm);
    w.write_attr("/ct", "photons_per_ray", d.photons_per_ray);
    w.write_attr("/ct", "electronic_sigma", d.electronic_sigma);
    w.write_attr("/ct", "mu_per_mm", d.mu_per_mm);
    internal::write_attr_maps(w, "/ct", d.numbers, d.texts);
  }
  if (m.image) {
    const ImageProblemData& d = *m.image;
    w.write("/observed/image", d.observed);
    w.write("/observed/pixel_mask", d.pixel_mask);
    w.write_attr("/observed", "noise_sigma", d.noise_sigma);
    w.write_attr("/observed", "pattern", d.pattern);
    w.write_attr("/observed", "kept_fraction", d.kept_fraction);
  }
  if (m.truth) {
    if (m.truth_is_complex) {
      w.write("/truth/image", *m.truth);
    } else {
      NdArray<float> re(m.truth->shape);
      for (Index i = 0; i < re.size(); ++i) re.data[static_cast<size_t>(i)] = m.truth->data[static_cast<size_t>(i)].real();
      w.write("/truth/image", re);
    }
    if (!m.truth_kind.empty()) w.write_attr("/truth", "kind", m.truth_kind);
  }
  internal::write_provenance_group(w, m.provenance);
  w.commit();
}

Measurement read_measurement_file(const std::string& path) {
  H5Reader r(path);
  Checked c(r);
  Measurement m;
  m.modality = *parse_modality(c.text("/", "modality", true, "", {"mri", "ct", "denoise", "inpaint"}));
  if (!r.has_attr("/", "image_shape")) c.bad("/", "attribute 'image_shape' is missing (expected [ny, nx])");
  const auto shape = r.attr_doubles("/", "image_shape");
  if (shape.size() != 2 || !(shape[0] >= 1) || !(shape[1] >= 1) || std::floor(shape[0]) != shape[0] ||
      std::floor(shape[1]) != shape[1])
    c.bad("/", "attribute 'image_shape' must be two positive integers [ny, nx]");
  m.ny = static_cast<Index>(shape[0]);
  m.nx = static_cast<Index>(shape[1]);
  const Shape image_shape{m.ny, m.nx};
  if (r.has_attr("/", "pixel_spacing_mm")) {
    const auto sp = r.attr_doubles("/", "pixel_spacing_mm");
    if (sp.size() != 2 || !(sp[0] > 0) || !(sp[1] > 0) || !std::isfinite(sp[0]) || !std::isfinite(sp[1]))
      c.bad("/", "attribute 'pixel_spacing_mm' must be two positive numbers (dy, dx)");
    m.pixel_spacing_mm[0] = sp[0];
    m.pixel_spacing_mm[1] = sp[1];
  }

  if (m.modality == Modality::kMri) {
    m.mri = read_mri(r, c, m.ny, m.nx);
  } else if (m.modality == Modality::kDenoise || m.modality == Modality::kInpaint) {
    m.image = read_observed(r, c, image_shape, m.modality);
  } else {
    if (!r.has("/ct")) c.bad("/ct", "group is missing (modality is ct)");
    CtData d;
    const Shape ss = r.shape("/ct/sinogram");
    require_rank(ss, 2, 2, path, "/ct/sinogram");
    if (ss.size() == 0) c.bad("/ct/sinogram", "is empty (shape " + ss.to_string() + ")");
    if (r.is_complex("/ct/sinogram")) c.bad("/ct/sinogram", "is complex, expected float32");
    d.sinogram = r.read_float("/ct/sinogram");
    require_finite(d.sinogram.ptr(), d.sinogram.size(), path, "/ct/sinogram");
    const NdArray<double> angles = r.read_double("/ct/angles_rad");
    require_shape(angles.shape, Shape{ss[0]}, path, "/ct/angles_rad");
    require_finite(angles.ptr(), angles.size(), path, "/ct/angles_rad");
    d.angles_rad = angles.data;
    d.beam = *parse_ct_beam(c.text("/ct", "geometry", true, "", {"parallel", "fan"}));
    d.detector_shape = *parse_fan_detector(c.text("/ct", "detector_shape", false, "flat", {"flat", "equiangular"}));
    d.detector_count = static_cast<int64_t>(c.number("/ct", "detector_count", false, static_cast<double>(ss[1]), 1.0));
    if (d.detector_count != ss[1])
      c.bad("/ct", "attribute 'detector_count' = " + std::to_string(d.detector_count) + " but /ct/sinogram has " +
                       std::to_string(ss[1]) + " detectors");
    d.detector_spacing_mm = c.number("/ct", "detector_spacing_mm", false, 1.0, 0.0);
    if (!(d.detector_spacing_mm > 0)) c.bad("/ct", "attribute 'detector_spacing_mm' must be > 0");
    d.detector_offset_mm = c.number("/ct", "detector_offset_mm", false, 0.0, -HUGE_VAL);
    d.source_to_isocenter_mm = c.number("/ct", "source_to_isocenter_mm", false, 0.0, 0.0);
    d.source_to_detector_mm = c.number("/ct", "source_to_detector_mm", false, 0.0, 0.0);
    if (d.beam == CtBeam::kFan && !(d.source_to_isocenter_mm > 0 && d.source_to_detector_mm > d.source_to_isocenter_mm))
      c.bad("/ct", "fan geometry needs source_to_detector_mm > source_to_isocenter_mm > 0");
    d.photons_per_ray = c.number("/ct", "photons_per_ray", false, 0.0, 0.0);
    d.electronic_sigma = c.number("/ct", "electronic_sigma", false, 0.0, 0.0);
    d.mu_per_mm = c.number("/ct", "mu_per_mm", false, 1.0, 0.0);
    c.extras("/ct", kCtAttrs, d.numbers, d.texts);
    m.ct = std::move(d);
  }

  if (r.has("/truth/image")) {
    require_shape(r.shape("/truth/image"), image_shape, path, "/truth/image");
    m.truth_is_complex = r.is_complex("/truth/image");
    m.truth = r.read_complex("/truth/image");
    require_finite(m.truth->ptr(), m.truth->size(), path, "/truth/image");
    m.truth_kind = c.text("/truth", "kind", false, "", {"analytic", "discrete", "fully sampled"});
  }
  m.provenance = internal::read_provenance_group(r);
  return m;
}

}  // namespace recofold
