// SPDX-License-Identifier: Apache-2.0
// CT parts of `recofold simulate` and `recofold recon`: flags, their checks, and calls into acquire/recon.
#include "ct_cli.h"

#include <cmath>
#include <sstream>

#include "recofold/acquire/ct_simulation.h"
#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/ops/ct_geometry.h"
#include "recofold/sampling/view_set.h"

namespace recofold::cli {

namespace {

bool given(const CLI::Option* o) { return o != nullptr && o->count() > 0; }

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
  // Flag-level rules: names, explicit zeros (0 stands for "automatic" only
  // when the flag is left out), conflicting view sources. Value ranges are
  // the library's (CtSimulationOptions::validate), mapped back to flags below.
  FlagErrors errors;
  const auto beam_from_flag = parse_ct_beam(f.geometry);
  if (!beam_from_flag) errors.add("--geometry", "= '" + f.geometry + "'; expected parallel or fan");
  const auto shape = parse_fan_detector(f.detector_shape);
  if (!shape) errors.add("--detector-shape", "= '" + f.detector_shape + "'; expected flat or equiangular");
  if (given(f.given.arc) && f.arc_deg == 0.0) errors.add("--arc", "= 0; must be in (0, 360] degrees");
  if (given(f.given.detectors) && f.detectors == 0) errors.add("--detectors", "= 0; must be >= 1");
  if (given(f.given.spacing) && f.detector_spacing_mm == 0.0) errors.add("--detector-spacing", "= 0; must be > 0");
  if (given(f.given.sid) && f.source_to_isocenter_mm == 0.0) errors.add("--sid", "= 0; must be > 0");
  if (given(f.given.sdd) && f.source_to_detector_mm == 0.0) errors.add("--sdd", "= 0; must be > 0");
  if (given(f.given.mu) && f.mu_per_mm == 0.0)
    errors.add("--mu", "= 0; must be > 0 (leave it out for the automatic scale)");
  if (!(f.photons >= 0.0) || !std::isfinite(f.photons))
    errors.add("--photons", "= " + format_sig(f.photons, 6) + "; must be >= 0 (0: noiseless)");
  if (!(f.electronic_sigma >= 0.0) || !std::isfinite(f.electronic_sigma))
    errors.add("--electronic-noise", "= " + format_sig(f.electronic_sigma, 6) + "; must be >= 0");
  if (f.electronic_sigma > 0.0 && f.photons == 0.0)
    errors.add("--electronic-noise", "needs --photons (the noise is in counts)");
  if (f.bowtie && f.photons == 0.0) errors.add("--bowtie", "needs --photons");
  const int sources = int(!f.views_file.empty()) + int(!f.view_spec.empty());
  if (sources > 1) errors.add("--views-file", "conflicts with --view-spec; give one view source");
  if (sources > 0 && (given(f.given.views) || given(f.given.arc) || given(f.given.golden)))
    errors.add(f.view_spec.empty() ? "--views-file" : "--view-spec", "conflicts with --views/--arc/--golden");
  if (raster.shape.rank() < 2)
    errors.add("--phantom", "image of shape " + raster.shape.to_string() + "; need [ny, nx]");
  if (analytic_truth && analytic == nullptr)
    errors.add("--truth", "analytic needs a phantom file with a component table; use --truth discrete");
  errors.throw_if_any();

  CtSimulationOptions o;
  CtScan& scan = o.scan;
  scan.beam = *beam_from_flag;
  scan.fan_detector = *shape;
  if (!f.view_spec.empty()) {
    const CtProtocol protocol = load_ct_protocol(f.view_spec);
    if (protocol.beam) {
      if (given(f.given.geometry) && *protocol.beam != scan.beam)
        throw InputError(f.view_spec, "geometry",
                         "'" + std::string(to_string(*protocol.beam)) + "' but --geometry is " + f.geometry);
      scan.beam = *protocol.beam;
    }
    scan.angles_rad = make_view_set(protocol.views);
  } else if (!f.views_file.empty()) {
    scan.angles_rad = read_view_file(f.views_file);
  } else {
    scan.views = f.views;
    scan.arc_deg = f.arc_deg;
    scan.order = f.golden ? ViewOrder::kGolden : ViewOrder::kSequential;
  }
  scan.detector_count = f.detectors;
  scan.detector_spacing_mm = f.detector_spacing_mm;
  scan.detector_offset_mm = f.detector_offset_mm;
  scan.source_to_isocenter_mm = f.source_to_isocenter_mm;
  scan.source_to_detector_mm = f.source_to_detector_mm;
  o.mu_per_mm = f.mu_per_mm;
  o.analytic = analytic_truth;
  o.noisy = f.photons > 0.0;
  o.noise.photons_per_ray = f.photons > 0.0 ? f.photons : 1.0;
  o.noise.bowtie = f.bowtie;
  o.noise.bowtie_edge_fraction = f.bowtie_edge;
  o.noise.electronic_sigma = f.electronic_sigma;
  o.seed = seed;
  o.view_source = !f.view_spec.empty()    ? "protocol " + f.view_spec
                  : !f.views_file.empty() ? "file " + f.views_file
                  : f.golden              ? "golden"
                                          : "sequential";

  const int r = raster.shape.rank();
  const Index ny = raster.shape[r - 2], nx = raster.shape[r - 1];
  ImageC image(ny, nx);
  std::copy(raster.data.end() - ny * nx, raster.data.end(), image.data());
  try {
    return simulate_ct(analytic_truth ? analytic : nullptr, image, pixel_spacing_mm, o);
  } catch (const InputError& e) {
    throw_with_flags(e, ct_simulate_flags());
  }
}

const std::vector<FieldFlag>& ct_simulate_flags() {
  static const std::vector<FieldFlag> map = {
      {"ct.views", "--views"},
      {"ct.arc_deg", "--arc"},
      {"ct.start_deg", "--view-spec"},
      {"ct.angles_rad[", "--views-file"},
      {"ct.detector_count", "--detectors"},
      {"ct.detector_spacing_mm", "--detector-spacing"},
      {"ct.detector_offset_mm", "--detector-offset"},
      {"ct.source_to_isocenter_mm", "--sid"},
      {"ct.source_to_detector_mm", "--sdd"},
      {"ct.photons_per_ray", "--photons"},
      {"ct.bowtie_edge_fraction", "--bowtie-edge"},
      {"ct.electronic_sigma", "--electronic-noise"},
      {"ct.mu_per_mm", "--mu"},
      {"ct.", "--phantom"},
      {"phantom", "--phantom"},
      {"raster", "--phantom"},
      {"truth", "--truth"},
  };
  return map;
}

}  // namespace recofold::cli
