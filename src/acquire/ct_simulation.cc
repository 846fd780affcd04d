// SPDX-License-Identifier: Apache-2.0
// CT simulation: exact or projected sinogram, attenuation scale, transmission noise, CtData record.
#include "recofold/acquire/ct_simulation.h"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "recofold/core/error.h"
#include "recofold/ops/joseph_projector.h"
#include "recofold/phantom/line_integral.h"

namespace recofold {

namespace {
std::string num(double v) {
  std::ostringstream s;
  s << v;
  return s.str();
}
}  // namespace

CtData simulate_ct(const CtSimulationOptions& o, const Phantom* phantom, const ImageF& raster) {
  const CtGeometry& g = o.geometry;
  auto errors = g.validate();
  if (!errors.empty()) {
    std::string all;
    for (const auto& e : errors) all += (all.empty() ? "" : "; ") + e;
    throw InputError("", "ct geometry", all);
  }
  if (!std::isfinite(o.mu_per_mm)) throw InputError("", "mu_per_mm", "must be finite");
  if (o.noisy) {
    const auto ne = o.noise.validate();
    if (!ne.empty()) throw InputError("", "transmission noise", ne.front());
  }
  const Index nv = g.view_count(), nd = g.detector_count;
  NdArray<float> sino(Shape{nv, nd});

  if (o.analytic) {
    if (phantom == nullptr) throw InputError("", "phantom", "exact line integrals need an analytic phantom");
    const double width = double(g.nx) * g.pixel_size_mm;
    if (g.nx != g.ny)
      throw InputError("", "phantom",
                       "exact CT needs a square grid; got " + std::to_string(g.ny) + "x" + std::to_string(g.nx));
    if (std::abs(width - phantom->fov_mm) > 1e-3 * phantom->fov_mm)
      throw InputError("", "phantom",
                       "fov_mm = " + num(phantom->fov_mm) + " but the grid is " + num(width) + " mm wide");
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
    if (raster.rows() != g.ny || raster.cols() != g.nx)
      throw InputError("", "raster",
                       "shape [" + std::to_string(raster.rows()) + ", " + std::to_string(raster.cols()) +
                           "] differs from the grid [" + std::to_string(g.ny) + ", " + std::to_string(g.nx) + "]");
    JosephProjector a(g, 1.0);
    a.project(raster.data(), sino.ptr());
  }

  const float largest = sino.data.empty() ? 0.0f : *std::max_element(sino.data.begin(), sino.data.end());
  const bool automatic = !(o.mu_per_mm > 0.0);
  double mu = o.mu_per_mm;
  if (automatic) {
    if (!(largest > 0.0f))
      throw InputError("", "mu_per_mm",
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

}  // namespace recofold
