// SPDX-License-Identifier: Apache-2.0
// Non-Cartesian MRI simulation: exact or NUFFT-of-raster k-space at trajectory points, noise.
#include "recofold/acquire/mri_trajectory.h"

#include <cmath>
#include <algorithm>
#include <memory>

#include "recofold/acquire/exact_kspace.h"
#include "recofold/core/error.h"

namespace recofold {

TrajectorySamples simulate_mri_trajectory(const Phantom* analytic, const ImageC& raster, const Trajectory& t,
                                          const MriSimulationOptions& o, const NufftOptions& nufft) {
  throw_if_invalid(o.validate());
  const Index ny = raster.rows(), nx = raster.cols(), m = t.kx.size();
  if (ny < 1 || nx < 1) throw InputError("", "raster", "the object image is empty");
  if (t.ny != ny || t.nx != nx)
    throw InputError("", "trajectory",
                     "trajectory grid " + Shape{t.ny, t.nx}.to_string() + " differs from the image shape " +
                         Shape{ny, nx}.to_string());
  if (m < 1 || t.ky.size() != m) throw InputError("", "trajectory", "the trajectory has no points");
  check_kspace_points(t.kx, t.ky, ny, nx);
  if (o.truth == MriTruth::kAnalytic && analytic == nullptr)
    throw InputError("", "truth",
                     "analytic k-space needs a phantom file with a component table (/phantom/components); "
                     "use discrete truth for a raster-only object");

  const int c_count = o.coil_array.coils;
  const CoilFourierSeries series = fit_coil_fourier_series(o.coil_array);
  TrajectorySamples s;
  s.coil_maps = coil_series_maps(series, ny, nx);
  NdArray<cfloat> k;
  if (o.truth == MriTruth::kAnalytic) {
    k = exact_kspace_at_points(*analytic, ny, nx, t.kx, t.ky, c_count > 1 ? &series : nullptr);
    s.kspace_source = c_count > 1 ? "closed-form transform of object x coil Fourier series at the trajectory points"
                                  : "closed-form transform at the trajectory points";
  } else {
    auto plan = std::make_shared<const NufftPlan>(ny, nx, t.kx, t.ky, nufft);
    const SenseNufft e(plan, c_count > 1 ? s.coil_maps : NdArray<cfloat>{});
    const VecC x = Eigen::Map<const VecC>(raster.data(), ny * nx);
    VecC y;
    e.apply(x, y);
    k = NdArray<cfloat>(Shape{c_count, m});
    std::copy(y.data(), y.data() + y.size(), k.data.begin());
    s.kspace_source = "discrete: SENSE-NUFFT of the raster (inverse crime), " + plan->kernel().to_string();
  }
  // The Cartesian noise helpers see the samples as a [C, 1, M] grid that is sampled everywhere.
  k.shape = Shape{c_count, 1, m};
  const NdArray<uint8_t> all(Shape{1, m}, 1);
  double sigma = o.noise_sigma;
  if (std::isfinite(o.snr_db)) sigma = sigma_from_snr_db(k, all, o.snr_db);
  Rng rng = Rng::for_stream(o.seed, 0x6d7269);  // "mri": the noise stream of this seed, as in simulate_mri
  add_kspace_noise(k, all, sigma, o.coil_correlation, rng);
  k.shape = Shape{c_count, m};
  s.kspace = std::move(k);
  s.noise_sigma = sigma;
  return s;
}

Measurement simulate_mri_trajectory_measurement(const Phantom* analytic, const ImageC& raster, double pixel_spacing_mm,
                                                const Trajectory& t, const MriSimulationOptions& o,
                                                const NufftOptions& nufft) {
  if (static_cast<Index>(t.dcf.size()) != t.points())
    throw InputError("", "trajectory",
                     "the density compensation has " + std::to_string(t.dcf.size()) + " weights for " +
                         std::to_string(t.points()) + " points");
  TrajectorySamples s = simulate_mri_trajectory(analytic, raster, t, o, nufft);
  const Index ny = raster.rows(), nx = raster.cols(), n = ny * nx;
  Measurement m;
  m.modality = Modality::kMri;
  m.ny = ny;
  m.nx = nx;
  m.pixel_spacing_mm[0] = m.pixel_spacing_mm[1] = pixel_spacing_mm;
  MriData d;
  d.kspace = std::move(s.kspace);
  d.coil_maps = std::move(s.coil_maps);
  d.noise_sigma = s.noise_sigma;
  d.pattern = std::string(to_string(t.kind));
  d.acceleration = static_cast<double>(n) / static_cast<double>(t.points());
  d.coil_maps_source = "synthetic";
  d.trajectory = t;
  if (std::isfinite(o.snr_db)) d.numbers["snr_db"] = o.snr_db;
  d.numbers["coil_correlation"] = o.coil_correlation;
  d.numbers["seed"] = static_cast<double>(o.seed);
  d.numbers["coil_ring_radius"] = o.coil_array.ring_radius;
  d.texts["kspace_source"] = s.kspace_source;
  d.texts["truth"] = std::string(to_string(o.truth));
  m.mri = std::move(d);
  set_simulated_truth(m, analytic, raster, o.truth);
  return m;
}

}  // namespace recofold
