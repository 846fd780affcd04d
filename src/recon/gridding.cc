// SPDX-License-Identifier: Apache-2.0
// Gridding reconstruction and the SENSE-NUFFT forward model of non-Cartesian samples.
#include "recofold/recon/gridding.h"

#include <cmath>
#include <complex>

#include "recofold/core/error.h"

namespace recofold {

namespace {

void check_samples(const NufftPlan& plan, const NdArray<cfloat>& kspace, const NdArray<cfloat>& maps,
                   const std::string& file) {
  if (kspace.shape.rank() != 2 || kspace.shape[1] != plan.points() || kspace.shape[0] < 1)
    throw InputError(file, "/mri/kspace",
                     "expected [coils, " + std::to_string(plan.points()) + "] samples of the trajectory, got " +
                         kspace.shape.to_string());
  if (!maps.data.empty() && maps.shape != Shape{kspace.shape[0], plan.ny(), plan.nx()})
    throw InputError(file, "/mri/coil_maps",
                     "shape " + maps.shape.to_string() + ", expected " +
                         Shape{kspace.shape[0], plan.ny(), plan.nx()}.to_string());
  for (const cfloat& v : kspace.data)
    if (!std::isfinite(v.real()) || !std::isfinite(v.imag()))
      throw InputError(file, "/mri/kspace", "holds a value that is not finite");
}

}  // namespace

ImageC gridding(const NufftPlan& plan, const std::vector<float>& dcf, const NdArray<cfloat>& kspace,
                const NdArray<cfloat>& maps, CoilCombine combine, const std::string& file) {
  check_samples(plan, kspace, maps, file);
  const Index c_count = kspace.shape[0], m = plan.points(), ny = plan.ny(), nx = plan.nx(), n = ny * nx;
  if (static_cast<Index>(dcf.size()) != m)
    throw InputError(file, "/trajectory/dcf",
                     std::to_string(dcf.size()) + " weights for " + std::to_string(m) + " points");
  for (float w : dcf)
    if (!std::isfinite(w) || w < 0.0f) throw InputError(file, "/trajectory/dcf", "weights must be finite and >= 0");
  const bool have_maps = !maps.data.empty();
  if (combine == CoilCombine::kSensitivity && !have_maps && c_count > 1)
    throw InputError(file, "/mri/coil_maps", "the sensitivity-weighted combination (sense) needs coil maps; use sos");
  std::vector<cfloat> images(static_cast<size_t>(c_count * n)), wy(static_cast<size_t>(c_count * m));
  for (Index c = 0; c < c_count; ++c)
    for (Index j = 0; j < m; ++j)
      wy[static_cast<size_t>(c * m + j)] = kspace.data[static_cast<size_t>(c * m + j)] * dcf[static_cast<size_t>(j)];
  for (Index c = 0; c < c_count; ++c) plan.adjoint(wy.data() + c * m, images.data() + c * n);
  ImageC out(ny, nx);
  for (Index i = 0; i < n; ++i) {
    if (combine == CoilCombine::kSumOfSquares) {
      double s = 0.0;
      for (Index c = 0; c < c_count; ++c) s += std::norm(std::complex<double>(images[static_cast<size_t>(c * n + i)]));
      out.data()[i] = cfloat(static_cast<float>(std::sqrt(s)), 0.0f);
    } else if (!have_maps) {
      out.data()[i] = images[static_cast<size_t>(i)];
    } else {
      std::complex<double> num(0.0, 0.0);
      double den = 0.0;
      for (Index c = 0; c < c_count; ++c) {
        const std::complex<double> s(maps.data[static_cast<size_t>(c * n + i)]);
        num += std::conj(s) * std::complex<double>(images[static_cast<size_t>(c * n + i)]);
        den += std::norm(s);
      }
      const std::complex<double> v = den > 0.0 ? num / den : std::complex<double>(0.0, 0.0);
      out.data()[i] = cfloat(static_cast<float>(v.real()), static_cast<float>(v.imag()));
    }
  }
  return out;
}

ForwardModel make_trajectory_forward_model(std::shared_ptr<const NufftPlan> plan, const NdArray<cfloat>& kspace,
                                           const NdArray<cfloat>& maps, double noise_sigma, const std::string& file) {
  check_samples(*plan, kspace, maps, file);
  ForwardModel f;
  f.op = std::make_unique<SenseNufft>(std::move(plan), maps);
  f.y = Eigen::Map<const VecC>(kspace.data.data(), kspace.size());
  f.noise_sigma = noise_sigma;
  f.complex_noise = true;
  f.measured_values = kspace.size();
  return f;
}

}  // namespace recofold
