// SPDX-License-Identifier: Apache-2.0
// CT parts of `recofold simulate` and `recofold recon`: flags, their checks, and calls into acquire/recon.
#include "ct_cli.h"

#include <cmath>
#include <sstream>

#include "recofold/acquire/ct_simulation.h"
#include "recofold/core/error.h"
#include "recofold/ops/ct_geometry.h"
#include "recofold/recon/fbp.h"
#include "recofold/sampling/view_set.h"

namespace recofold::cli {

namespace {

bool given(const CLI::Option* o) { return o != nullptr && o->count() > 0; }

std::string num(double v) {
  std::ostringstream s;
  s << v;
  return s.str();
}

// Collects flag problems so one run reports all of them; the error's field is
// the first bad flag.
class FlagErrors {
 public:
  void add(const std::string& flag, const std::string& reason) {
    if (field_.empty()) field_ = flag;
    text_ += (text_.empty() ? "" : "; ") + flag + " " + reason;
  }
  void throw_if_any() const {
    if (!field_.empty()) throw InputError("", field_, text_);
  }

 private:
  std::string field_, text_;
};

// Geometry field names as the flags that set them.
std::string flag_of(const std::string& message) {
  if (message.find("angles") != std::string::npos) return "--views";
  if (message.find("detector_count") != std::string::npos) return "--detectors";
  if (message.find("detector_spacing") != std::string::npos) return "--detector-spacing";
  if (message.find("detector_offset") != std::string::npos) return "--detector-offset";
  if (message.find("source_to_isocenter") != std::string::npos) return "--sid";
  if (message.find("source_to_detector") != std::string::npos) return "--sdd";
  if (message.find("equiangular") != std::string::npos) return "--detector-spacing";
  return "--phantom";
}

}  // namespace

void add_ct_simulate_flags(CLI::App& sub, CtSimulateFlags& f) {
  const std::string g = "CT (--modality ct)";
  f.given.views = sub.add_option("--views", f.views, "CT: number of views, equally spaced over the arc")
                      ->capture_default_str()
                      ->group(g);
  f.given.arc = sub.add_option("--arc", f.arc_deg,
                               "CT: arc in degrees, (0, 360]; < 180 is limited-angle (default 180 parallel, 360 fan)")
                    ->group(g);
  f.given.golden =
      sub.add_flag("--golden", f.golden, "CT: golden-angle view order (111.246 deg steps over 180)")->group(g);
  sub.add_option("--views-file", f.views_file, "CT: view angles in degrees, one per line ('#' comments)")->group(g);
  sub.add_option("--view-spec", f.view_spec, "CT: view protocol, e.g. sampling-masks/ct-sparse-60.toml")->group(g);
  f.given.geometry = sub.add_option("--geometry", f.geometry, "CT: parallel | fan")->capture_default_str()->group(g);
  sub.add_option("--detector-shape", f.detector_shape, "CT fan: equiangular | flat")->capture_default_str()->group(g);
  f.given.detectors =
      sub.add_option("--detectors", f.detectors, "CT: detector elements (default ceil(sqrt(2) * grid size))")->group(g);
  f.given.spacing = sub.add_option("--detector-spacing", f.detector_spacing_mm,
                                   "CT: detector pitch in mm (default: one pixel at the isocentre)")
                        ->group(g);
  sub.add_option("--detector-offset", f.detector_offset_mm, "CT: detector centre shift in mm")->group(g);
  f.given.sid = sub.add_option("--sid", f.source_to_isocenter_mm,
                               "CT fan: source-to-isocentre distance in mm (default 2x field of view)")
                    ->group(g);
  f.given.sdd =
      sub.add_option("--sdd", f.source_to_detector_mm, "CT fan: source-to-detector distance in mm (default 2x sid)")
          ->group(g);
  sub.add_option("--photons", f.photons,
                 "CT: incident photons per ray I0 for Poisson noise (0: noiseless; low dose ~1e4-1e5)")
      ->group(g);
  sub.add_flag("--bowtie", f.bowtie, "CT: bowtie-like I0 fall-off towards the detector edges")->group(g);
  sub.add_option("--bowtie-edge", f.bowtie_edge, "CT: I0 fraction at the detector edge with --bowtie")
      ->capture_default_str()
      ->group(g);
  sub.add_option("--electronic-noise", f.electronic_sigma, "CT: Gaussian electronic noise, std in counts")->group(g);
  f.given.mu = sub.add_option("--mu", f.mu_per_mm,
                              "CT: attenuation in 1/mm per unit phantom intensity (default: automatic, so the "
                              "largest line integral is 4, like ~200 mm of water at 0.02/mm)")
                   ->group(g);
}

Measurement simulate_ct_measurement(const CtSimulateFlags& f,
                                    const Phantom* analytic,
                                    const NdArray<cfloat>& raster,
                                    double pixel_spacing_mm,
                                    bool analytic_truth,
                                    uint64_t seed) {
  FlagErrors errors;
  const auto beam_from_flag = parse_ct_beam(f.geometry);
  if (!beam_from_flag) errors.add("--geometry", "= '" + f.geometry + "'; expected parallel or fan");
  const auto shape = parse_fan_detector(f.detector_shape);
  if (!shape) errors.add("--detector-shape", "= '" + f.detector_shape + "'; expected flat or equiangular");
  if (f.views < 1) errors.add("--views", "= " + std::to_string(f.views) + "; must be >= 1");
  if ((given(f.given.arc) || f.arc_deg != 0.0) && !(f.arc_deg > 0.0 && f.arc_deg <= 360.0))
    errors.add("--arc", "= " + num(f.arc_deg) + "; must be in (0, 360] degrees");
  if ((given(f.given.detectors) || f.detectors != 0) && f.detectors < 1)
    errors.add("--detectors", "= " + std::to_string(f.detectors) + "; must be >= 1");
  if ((given(f.given.spacing) || f.detector_spacing_mm != 0.0) && !(f.detector_spacing_mm > 0.0))
    errors.add("--detector-spacing", "= " + num(f.detector_spacing_mm) + "; must be > 0");
  if (!std::isfinite(f.detector_offset_mm)) errors.add("--detector-offset", "must be finite");
  if ((given(f.given.sid) || f.source_to_isocenter_mm != 0.0) && !(f.source_to_isocenter_mm > 0.0))
    errors.add("--sid", "= " + num(f.source_to_isocenter_mm) + "; must be > 0");
  if ((given(f.given.sdd) || f.source_to_detector_mm != 0.0) && !(f.source_to_detector_mm > 0.0))
    errors.add("--sdd", "= " + num(f.source_to_detector_mm) + "; must be > 0");
  if (!(f.photons >= 0.0) || !std::isfinite(f.photons))
    errors.add("--photons", "= " + num(f.photons) + "; must be >= 0 (0: noiseless)");
  if (!(f.electronic_sigma >= 0.0) || !std::isfinite(f.electronic_sigma))
    errors.add("--electronic-noise", "= " + num(f.electronic_sigma) + "; must be >= 0");
  if (f.electronic_sigma > 0.0 && f.photons == 0.0)
    errors.add("--electronic-noise", "needs --photons (the noise is in counts)");
  if (f.bowtie && f.photons == 0.0) errors.add("--bowtie", "needs --photons");
  if (f.bowtie && !(f.bowtie_edge > 0.0 && f.bowtie_edge <= 1.0))
    errors.add("--bowtie-edge", "= " + num(f.bowtie_edge) + "; must be in (0, 1]");
  if ((given(f.given.mu) || f.mu_per_mm != 0.0) && !(f.mu_per_mm > 0.0 && std::isfinite(f.mu_per_mm)))
    errors.add("--mu", "= " + num(f.mu_per_mm) + "; must be > 0 (leave it out for the automatic scale)");
  const int sources = int(!f.views_file.empty()) + int(!f.view_spec.empty());
  if (sources > 1) errors.add("--views-file", "conflicts with --view-spec; give one view source");
  if (sources > 0 && (given(f.given.views) || given(f.given.arc) || given(f.given.golden)))
    errors.add(f.view_spec.empty() ? "--views-file" : "--view-spec", "conflicts with --views/--arc/--golden");
  if (!(pixel_spacing_mm > 0.0)) errors.add("--phantom", "pixel spacing " + num(pixel_spacing_mm) + " mm; must be > 0");
  if (raster.shape.rank() < 2)
    errors.add("--phantom", "image of shape " + raster.shape.to_string() + "; need [ny, nx]");
  if (analytic_truth && analytic == nullptr)
    errors.add("--truth", "analytic needs a phantom file with a component table; use --truth discrete");
  errors.throw_if_any();

  // View angles and beam.
  CtBeam beam = *beam_from_flag;
  std::vector<double> angles;
  if (!f.view_spec.empty()) {
    const CtProtocol protocol = load_ct_protocol(f.view_spec);
    if (!protocol.geometry.empty()) {
      const CtBeam from_protocol = *parse_ct_beam(protocol.geometry);
      if (given(f.given.geometry) && from_protocol != beam)
        throw InputError(f.view_spec, "geometry", "'" + protocol.geometry + "' but --geometry is " + f.geometry);
      beam = from_protocol;
    }
    angles = make_view_set(protocol.views);
  } else if (!f.views_file.empty()) {
    angles = read_view_file(f.views_file);
  } else {
    ViewSetSpec spec;
    spec.views = f.views;
    spec.arc_deg = f.arc_deg > 0.0 ? f.arc_deg : (beam == CtBeam::kFan ? 360.0 : 180.0);
    spec.order = f.golden ? ViewOrder::kGolden : ViewOrder::kSequential;
    angles = make_view_set(spec);
  }

  // Grid and geometry.
  const int r = raster.shape.rank();
  const Index ny = raster.shape[r - 2], nx = raster.shape[r - 1];
  const double fov = double(std::max(ny, nx)) * pixel_spacing_mm;
  CtGeometry g;
  g.beam = beam;
  g.fan_detector = *shape;
  g.angles_rad = std::move(angles);
  g.ny = ny;
  g.nx = nx;
  g.pixel_size_mm = pixel_spacing_mm;
  g.detector_count =
      f.detectors > 0 ? f.detectors : static_cast<Index>(std::ceil(std::sqrt(2.0) * double(std::max(ny, nx))));
  g.detector_offset_mm = f.detector_offset_mm;
  if (beam == CtBeam::kFan) {
    g.source_to_isocenter_mm = f.source_to_isocenter_mm > 0.0 ? f.source_to_isocenter_mm : 2.0 * fov;
    g.source_to_detector_mm = f.source_to_detector_mm > 0.0 ? f.source_to_detector_mm : 2.0 * g.source_to_isocenter_mm;
    g.detector_spacing_mm = f.detector_spacing_mm > 0.0
                                ? f.detector_spacing_mm
                                : pixel_spacing_mm * g.source_to_detector_mm / g.source_to_isocenter_mm;
  } else {
    g.detector_spacing_mm = f.detector_spacing_mm > 0.0 ? f.detector_spacing_mm : pixel_spacing_mm;
  }
  FlagErrors geometry_errors;
  for (const std::string& e : g.validate()) geometry_errors.add(flag_of(e), "(" + e + ")");
  geometry_errors.throw_if_any();

  // The raster's real part on the grid (the truth image, and the object for --truth discrete).
  const Index offset = raster.size() - ny * nx;
  ImageF image(ny, nx);
  for (Index k = 0; k < ny * nx; ++k) image.data()[k] = raster.data[static_cast<size_t>(offset + k)].real();

  CtSimulationOptions o;
  o.geometry = g;
  o.mu_per_mm = f.mu_per_mm;
  o.analytic = analytic_truth;
  o.noisy = f.photons > 0.0;
  o.noise.photons_per_ray = f.photons > 0.0 ? f.photons : 1.0;
  o.noise.bowtie = f.bowtie;
  o.noise.bowtie_edge_fraction = f.bowtie_edge;
  o.noise.electronic_sigma = f.electronic_sigma;
  o.seed = seed;
  CtData ct = simulate_ct(o, analytic_truth ? analytic : nullptr, image);
  ct.texts["view_source"] = !f.view_spec.empty()    ? "protocol " + f.view_spec
                            : !f.views_file.empty() ? "file " + f.views_file
                            : f.golden              ? "golden"
                                                    : "sequential";

  Measurement m;
  m.modality = "ct";
  m.ny = ny;
  m.nx = nx;
  m.pixel_spacing_mm[0] = m.pixel_spacing_mm[1] = pixel_spacing_mm;
  m.ct = std::move(ct);
  NdArray<cfloat> truth(Shape{ny, nx});
  for (Index k = 0; k < ny * nx; ++k) truth.data[static_cast<size_t>(k)] = cfloat(image.data()[k], 0.0f);
  m.truth = std::move(truth);
  m.truth_is_complex = false;
  m.truth_kind = analytic_truth ? "analytic" : "discrete";
  return m;
}

void add_ct_recon_flags(CLI::App& sub, CtReconFlags& flags) {
  sub.add_option("--filter", flags.filter, "FBP window: " + fbp_filter_names())
      ->capture_default_str()
      ->group("CT (--method fbp)");
}

ImageRecord reconstruct_fbp_record(const Measurement& m, const CtReconFlags& flags) {
  const auto filter = parse_fbp_filter(flags.filter);
  if (!filter) throw InputError("", "--filter", "'" + flags.filter + "'; expected one of " + fbp_filter_names());
  if (m.modality != "ct" || !m.ct)
    throw InputError("", "--method", "fbp needs a CT measurement; this one is '" + m.modality + "'");
  FbpOptions options;
  options.filter = *filter;
  const ImageF img = fbp(m, options, "--meas");
  ImageRecord rec;
  rec.pixels = NdArray<cfloat>(Shape{img.rows(), img.cols()});
  for (Index k = 0; k < img.size(); ++k) rec.pixels.data[static_cast<size_t>(k)] = cfloat(img.data()[k], 0.0f);
  rec.is_complex = false;
  rec.pixel_spacing_mm[0] = m.pixel_spacing_mm[0];
  rec.pixel_spacing_mm[1] = m.pixel_spacing_mm[1];
  rec.description = "FBP (" + flags.filter + ") of a " + ct_geometry_from(m, "--meas").describe() + " sinogram";
  rec.text_attrs["method"] = "fbp";
  rec.text_attrs["filter"] = flags.filter;
  rec.number_attrs["mu_per_mm"] = m.ct->mu_per_mm;
  return rec;
}

}  // namespace recofold::cli
