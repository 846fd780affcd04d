// SPDX-License-Identifier: Apache-2.0
// CT simulation: the automatic geometry of a scan, exact or projected sinogram, attenuation scale, noise, record.
#include "recofold/acquire/ct_simulation.h"

#include <algorithm>
#include <cmath>

#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/ops/joseph_projector.h"
#include "recofold/phantom/line_integral.h"

namespace recofold {

namespace {

void bad(std::vector<FieldError>& e, const std::string& field, double v, const std::string& rule) {
  e.push_back({"ct." + field, format_number(v), rule});
}

// CT data of a complete geometry (no defaults left).
CtData simulate_ct_data(const CtSimulationOptions& o, const CtGeometry& g, const Phantom* phantom,
                        const ImageF& raster) {
  const Index nv = g.view_count(), nd = g.detector_count;
  NdArray<float> sino(Shape{nv, nd});
  if (o.analytic) {
    if (phantom == nullptr) throw InputError("", "truth", "exact line integrals need an analytic phantom");
    const double width = double(g.nx) * g.pixel_size_mm;
    if (g.nx != g.ny)
      throw InputError("", "phantom",
                       "exact CT needs a square grid; got " + std::to_string(g.ny) + "x" + std::to_string(g.nx));
    if (std::abs(width - phantom->fov_mm) > 1e-3 * phantom->fov_mm)
      throw InputError("", "phantom",
                       "fov_mm = " + format_number(phantom->fov_mm) + " but the grid is " + format_number(width) +
                           " mm wide");
    const double unit = phantom->mm_per_unit();
    std::vector<LineThrough> rays(static_cast<size_t>(nv * nd));
    for (Index v = 0; v < nv; ++v)
      for (Index j = 0; j < nd; ++j) {
        const CtRay r = g.ray(v, j);
        rays[static_cast<size_t>(v * nd + j)] = LineThrough{r.ax / unit, r.ay / unit, r.bx / unit, r.by / unit};
      }
    const Eigen::VectorXcd p = line_integrals_through(*phantom, rays);
    for (Index k = 0; k < nv * nd; ++k) sino.data[static_cast<size_t>(k)] = static_cast<float>(p[k].real() * unit);
  } else {
    JosephProjector a(g, 1.0);
    a.project(raster.data(), sino.ptr());
  }

  const float largest = sino.data.empty() ? 0.0f : *std::max_element(sino.data.begin(), sino.data.end());
  const bool automatic = !(o.mu_per_mm > 0.0);
  double mu = o.mu_per_mm;
  if (automatic) {
    if (!(largest > 0.0f))
      throw InputError("", "ct.mu_per_mm",
                       "cannot choose the attenuation automatically: the object has no positive line integral");
    mu = kAutoLargestLineIntegral / double(largest);
  }
  for (auto& s : sino.data) s = static_cast<float>(s * mu);

  CtData ct;
  store_geometry(g, ct);
  ct.mu_per_mm = mu;
  ct.numbers["largest_line_integral"] = double(largest) * mu;
  ct.numbers["mu_automatic"] = automatic ? 1.0 : 0.0;
  ct.texts["sinogram_source"] = o.analytic ? "analytic" : "discrete";
  if (!o.view_source.empty()) ct.texts["view_source"] = o.view_source;
  if (o.noisy) {
    add_transmission_noise(o.noise, sino.ptr(), nv, nd, o.seed);
    ct.photons_per_ray = o.noise.photons_per_ray;
    ct.electronic_sigma = o.noise.electronic_sigma;
    if (o.noise.bowtie) ct.numbers["bowtie_edge_fraction"] = o.noise.bowtie_edge_fraction;
    ct.texts["noise_model"] = std::string("counts ~ Poisson(I0 exp(-p))") +
                              (o.noise.electronic_sigma > 0 ? " + Normal(0, sigma_e)" : "") +
                              (o.noise.bowtie ? ", bowtie I0 profile" : "") + "; p = -ln(max(counts, 1) / I0)";
  } else {
    ct.texts["noise_model"] = "none";
  }
  ct.sinogram = std::move(sino);
  return ct;
}

}  // namespace

std::vector<FieldError> CtScan::validate() const {
  std::vector<FieldError> e;
  if (angles_rad.empty()) {
    if (views < 1) bad(e, "views", views, "must be >= 1");
    if (arc_deg != 0.0 && !(arc_deg > 0.0 && arc_deg <= 360.0)) bad(e, "arc_deg", arc_deg, "must be in (0, 360] degrees");
    if (!std::isfinite(start_deg)) bad(e, "start_deg", start_deg, "must be finite");
  } else {
    for (size_t i = 0; i < angles_rad.size(); ++i)
      if (!std::isfinite(angles_rad[i])) {
        e.push_back({"ct.angles_rad[" + std::to_string(i) + "]", format_number(angles_rad[i]), "must be finite"});
        break;
      }
  }
  if (detector_count < 0) bad(e, "detector_count", double(detector_count), "must be >= 1 (0: automatic)");
  if (!(detector_spacing_mm >= 0.0) || !std::isfinite(detector_spacing_mm))
    bad(e, "detector_spacing_mm", detector_spacing_mm, "must be > 0 (0: automatic)");
  if (!std::isfinite(detector_offset_mm)) bad(e, "detector_offset_mm", detector_offset_mm, "must be finite");
  if (!(source_to_isocenter_mm >= 0.0) || !std::isfinite(source_to_isocenter_mm))
    bad(e, "source_to_isocenter_mm", source_to_isocenter_mm, "must be > 0 (0: automatic)");
  if (!(source_to_detector_mm >= 0.0) || !std::isfinite(source_to_detector_mm))
    bad(e, "source_to_detector_mm", source_to_detector_mm, "must be > 0 (0: automatic)");
  return e;
}

CtGeometry make_ct_geometry(const CtScan& scan, Index ny, Index nx, double pixel_mm) {
  std::vector<FieldError> errors = scan.validate();
  if (ny < 1 || nx < 1)
    errors.push_back({"ct.grid", std::to_string(ny) + "x" + std::to_string(nx), "both sizes must be >= 1"});
  if (!(pixel_mm > 0.0) || !std::isfinite(pixel_mm))
    errors.push_back({"ct.pixel_size_mm", format_number(pixel_mm), "must be > 0"});
  throw_if_invalid(errors);
  CtGeometry g;
  g.beam = scan.beam;
  g.fan_detector = scan.fan_detector;
  if (!scan.angles_rad.empty()) {
    g.angles_rad = scan.angles_rad;
  } else {
    ViewSetSpec v;
    v.views = scan.views;
    v.arc_deg = scan.arc_deg > 0.0 ? scan.arc_deg : (scan.beam == CtBeam::kFan ? 360.0 : 180.0);
    v.start_deg = scan.start_deg;
    v.order = scan.order;
    g.angles_rad = make_view_set(v);
  }
  g.ny = ny;
  g.nx = nx;
  g.pixel_size_mm = pixel_mm;
  const double fov = double(std::max(ny, nx)) * pixel_mm;
  g.detector_count = scan.detector_count > 0 ? scan.detector_count
                                             : static_cast<Index>(std::ceil(std::sqrt(2.0) * double(std::max(ny, nx))));
  g.detector_offset_mm = scan.detector_offset_mm;
  if (scan.beam == CtBeam::kFan) {
    g.source_to_isocenter_mm = scan.source_to_isocenter_mm > 0.0 ? scan.source_to_isocenter_mm : 2.0 * fov;
    g.source_to_detector_mm =
        scan.source_to_detector_mm > 0.0 ? scan.source_to_detector_mm : 2.0 * g.source_to_isocenter_mm;
    g.detector_spacing_mm = scan.detector_spacing_mm > 0.0
                                ? scan.detector_spacing_mm
                                : pixel_mm * g.source_to_detector_mm / g.source_to_isocenter_mm;
  } else {
    g.detector_spacing_mm = scan.detector_spacing_mm > 0.0 ? scan.detector_spacing_mm : pixel_mm;
  }
  std::vector<FieldError> geometry_errors;
  for (const std::string& m : g.validate()) {
    FieldError f = parse_field_message(m, "ct.");
    // CtGeometry's messages name its own fields; a few are not "name = value" forms.
    if (f.field.rfind("ct.angles", 0) == 0) f.field = "ct.views";
    if (f.field == "ct.equiangular") {
      f.field = "ct.detector_spacing_mm";
      f.rule = m;
    }
    geometry_errors.push_back(f);
  }
  throw_if_invalid(geometry_errors);
  return g;
}

std::vector<FieldError> CtSimulationOptions::validate() const {
  std::vector<FieldError> e = scan.validate();
  if (!std::isfinite(mu_per_mm) || mu_per_mm < 0.0)
    bad(e, "mu_per_mm", mu_per_mm, "must be > 0 (0: automatic, the largest line integral becomes 4)");
  if (noisy)
    for (const FieldError& f : parse_field_messages(noise.validate(), "ct.")) e.push_back(f);
  return e;
}

Measurement simulate_ct(const Phantom* analytic, const ImageC& raster, double pixel_spacing_mm,
                        const CtSimulationOptions& o) {
  throw_if_invalid(o.validate());
  const Index ny = raster.rows(), nx = raster.cols();
  if (ny < 1 || nx < 1) throw InputError("", "raster", "the object image is empty");
  const CtGeometry g = make_ct_geometry(o.scan, ny, nx, pixel_spacing_mm);
  ImageF real(ny, nx);
  for (Index k = 0; k < ny * nx; ++k) real.data()[k] = raster.data()[k].real();

  Measurement m;
  m.modality = Modality::kCt;
  m.ny = ny;
  m.nx = nx;
  m.pixel_spacing_mm[0] = m.pixel_spacing_mm[1] = pixel_spacing_mm;
  m.ct = simulate_ct_data(o, g, o.analytic ? analytic : nullptr, real);
  NdArray<cfloat> truth(Shape{ny, nx});
  for (Index k = 0; k < ny * nx; ++k) truth.data[static_cast<size_t>(k)] = cfloat(real.data()[k], 0.0f);
  m.truth = std::move(truth);
  m.truth_is_complex = false;
  m.truth_kind = o.analytic ? "analytic" : "discrete";
  return m;
}

}  // namespace recofold
