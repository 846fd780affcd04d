// SPDX-License-Identifier: Apache-2.0
// MRI simulation: analytic or discrete multi-coil k-space, correlated complex noise, measurement record.
#include "recofold/acquire/mri.h"

#include <Eigen/Cholesky>
#include <Eigen/Dense>

#include <cmath>

#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/ops/fft.h"
#include "recofold/ops/fourier.h"
#include "recofold/phantom/fourier.h"
#include "recofold/phantom/raster.h"

namespace recofold {

namespace {

constexpr double kPi = 3.14159265358979323846;


double sinc_pi(double x) {  // sin(πx)/(πx)
  if (std::abs(x) < 1e-12) return 1.0;
  return std::sin(kPi * x) / (kPi * x);
}

// Offset of pixel centres from the DFT origin, in pixels: 1/2 for even n, 0 for odd.
double centre_offset(Index n) { return (n % 2 == 0) ? 0.5 : 0.0; }

}  // namespace

std::string_view to_string(MriTruth t) { return t == MriTruth::kAnalytic ? "analytic" : "discrete"; }

std::vector<FieldError> MriSimulationOptions::validate() const {
  std::vector<FieldError> e = parse_field_messages(coil_array.validate(), "mri.");
  if (oversampling < 2 || oversampling > 8)
    e.push_back({"mri.oversampling", std::to_string(oversampling), "must be 2..8"});
  if (!(noise_sigma >= 0.0) || !std::isfinite(noise_sigma))
    e.push_back({"mri.noise_sigma", format_number(noise_sigma), "must be a finite value >= 0"});
  if (!std::isnan(snr_db) && !std::isfinite(snr_db)) e.push_back({"mri.snr_db", format_number(snr_db), "must be finite"});
  if (std::isfinite(snr_db) && noise_sigma > 0.0)
    e.push_back({"mri.snr_db", format_number(snr_db), "give either mri.noise_sigma or mri.snr_db, not both"});
  if (!(coil_correlation >= 0.0 && coil_correlation < 1.0))
    e.push_back({"mri.coil_correlation", format_number(coil_correlation), "must be in [0, 1)"});
  return e;
}

NdArray<cfloat> oversampled_raster_kspace(const Phantom& p, const CoilArrayOptions& coils, Index ny, Index nx,
                                          int q) {
  RECOFOLD_CHECK(q >= 1 && ny > 0 && nx > 0);
  const Index fy = q * ny, fx = q * nx, fn = fy * fx, n = ny * nx;
  const ImageC fine = rasterize(p, static_cast<int>(fy), static_cast<int>(fx));
  const NdArray<cfloat> maps = synthetic_coil_maps(coils, fy, fx);
  const Index c_count = maps.shape[0];
  NdArray<cfloat> out(Shape{c_count, ny, nx});
  // Per-axis correction of a fine-grid sample to the coarse grid's convention:
  // the scale of the orthonormal DFT (1/sqrt(q) per axis: sqrt(ny nx) grows by q), the half-pixel offset of
  // the two grids' pixel centres, and the fine pixels' box average.
  auto axis_factor = [&](Index m, Index coarse, Index fine_n) {
    const double phase = 2.0 * kPi * static_cast<double>(m) *
                         (centre_offset(coarse) / static_cast<double>(coarse) -
                          centre_offset(fine_n) / static_cast<double>(fine_n));
    const double box = sinc_pi(static_cast<double>(m) / static_cast<double>(fine_n));
    return std::polar(1.0 / (std::sqrt(static_cast<double>(q)) * box), phase);
  };
  std::vector<std::complex<double>> fyv(static_cast<size_t>(ny)), fxv(static_cast<size_t>(nx));
  for (Index u = 0; u < ny; ++u) fyv[static_cast<size_t>(u)] = axis_factor(u - ny / 2, ny, fy);
  for (Index v = 0; v < nx; ++v) fxv[static_cast<size_t>(v)] = axis_factor(v - nx / 2, nx, fx);
  for (Index c = 0; c < c_count; ++c) {
    ImageC prod(fy, fx);
    const cfloat* s = maps.ptr() + c * fn;
    for (Index i = 0; i < fn; ++i) prod.data()[i] = fine.data()[i] * s[i];
    const ImageC k = fft2c(prod);
    for (Index u = 0; u < ny; ++u)
      for (Index v = 0; v < nx; ++v) {
        const Index fu = (u - ny / 2) + fy / 2, fv = (v - nx / 2) + fx / 2;
        const std::complex<double> val =
            std::complex<double>(k(fu, fv)) * fyv[static_cast<size_t>(u)] * fxv[static_cast<size_t>(v)];
        out.data[static_cast<size_t>(c * n + u * nx + v)] =
            cfloat(static_cast<float>(val.real()), static_cast<float>(val.imag()));
      }
  }
  return out;
}

double sigma_from_snr_db(const NdArray<cfloat>& clean, const NdArray<uint8_t>& mask, double snr_db) {
  RECOFOLD_CHECK(clean.shape.rank() == 3);
  const Index c_count = clean.shape[0], n = clean.shape[1] * clean.shape[2];
  double energy = 0.0;
  Index count = 0;
  for (Index c = 0; c < c_count; ++c)
    for (Index i = 0; i < n; ++i)
      if (mask.data[static_cast<size_t>(i)]) {
        energy += std::norm(std::complex<double>(clean.data[static_cast<size_t>(c * n + i)]));
        ++count;
      }
  if (count == 0 || energy <= 0.0) return 0.0;
  const double mean = energy / static_cast<double>(count);
  return std::sqrt(mean / (2.0 * std::pow(10.0, snr_db / 10.0)));
}

void add_kspace_noise(NdArray<cfloat>& kspace, const NdArray<uint8_t>& mask, double sigma, double rho, Rng& rng) {
  RECOFOLD_CHECK(kspace.shape.rank() == 3);
  if (sigma <= 0.0) return;
  const Index c_count = kspace.shape[0], n = kspace.shape[1] * kspace.shape[2];
  Eigen::MatrixXd psi(c_count, c_count);
  for (Index i = 0; i < c_count; ++i)
    for (Index j = 0; j < c_count; ++j) {
      const Index d0 = std::abs(i - j), d = std::min(d0, c_count - d0);
      psi(i, j) = d == 0 ? 1.0 : std::pow(rho, static_cast<double>(d));
    }
  Eigen::LLT<Eigen::MatrixXd> llt(psi);
  if (llt.info() != Eigen::Success)
    throw InvalidFields({{"mri.coil_correlation", format_number(rho),
                          "gives a correlation matrix that is not positive definite for " +
                              std::to_string(c_count) + " coils"}});
  const Eigen::MatrixXd l = llt.matrixL();
  Eigen::VectorXd zr(c_count), zi(c_count);
  for (Index i = 0; i < n; ++i) {
    if (!mask.data[static_cast<size_t>(i)]) continue;
    for (Index c = 0; c < c_count; ++c) {
      zr[c] = rng.normal();
      zi[c] = rng.normal();
    }
    const Eigen::VectorXd nr = l * zr, ni = l * zi;
    for (Index c = 0; c < c_count; ++c)
      kspace.data[static_cast<size_t>(c * n + i)] +=
          cfloat(static_cast<float>(sigma * nr[c]), static_cast<float>(sigma * ni[c]));
  }
}

void set_simulated_truth(Measurement& m, const Phantom* analytic, const ImageC& raster, MriTruth truth) {
  const Index n = raster.size();
  NdArray<cfloat> t(Shape{raster.rows(), raster.cols()});
  std::copy(raster.data(), raster.data() + n, t.data.begin());
  m.truth = std::move(t);
  m.truth_is_complex = analytic ? analytic->is_complex() : false;
  if (!analytic)
    for (Index i = 0; i < n && !m.truth_is_complex; ++i) m.truth_is_complex = raster.data()[i].imag() != 0.0f;
  m.truth_kind = std::string(to_string(truth));
}

Measurement simulate_mri(const Phantom* analytic, const ImageC& raster, double pixel_spacing_mm,
                         const SamplingMask& mask, const MriSimulationOptions& o) {
  throw_if_invalid(o.validate());
  const Index ny = raster.rows(), nx = raster.cols(), n = ny * nx;
  if (ny < 1 || nx < 1) throw InputError("", "raster", "the object image is empty");
  if (mask.mask.shape != Shape{ny, nx})
    throw InputError("", "mask",
                     "mask shape " + mask.mask.shape.to_string() + " differs from the image shape " +
                         Shape{ny, nx}.to_string());
  if (o.truth == MriTruth::kAnalytic && analytic == nullptr)
    throw InputError("", "truth",
                     "analytic k-space needs a phantom file with a component table (/phantom/components); "
                     "use discrete truth for a raster-only object");

  const int c_count = o.coil_array.coils;
  NdArray<cfloat> maps = synthetic_coil_maps(o.coil_array, ny, nx);
  NdArray<cfloat> k(Shape{c_count, ny, nx});
  std::string source;
  if (o.truth == MriTruth::kAnalytic && c_count == 1) {
    const ImageC kk = kspace_on_grid(*analytic, static_cast<int>(ny), static_cast<int>(nx));
    std::copy(kk.data(), kk.data() + n, k.data.begin());
    source = "closed-form transform at the grid frequencies";
  } else if (o.truth == MriTruth::kAnalytic) {
    k = oversampled_raster_kspace(*analytic, o.coil_array, ny, nx, o.oversampling);
    source = "object x coil map rasterised " + std::to_string(o.oversampling) + "x finer, cropped k-space";
  } else {
    MaskedFourier e(ny, nx, {}, maps);
    VecC x = Eigen::Map<const VecC>(raster.data(), n), y;
    e.apply(x, y);
    std::copy(y.data(), y.data() + y.size(), k.data.begin());
    source = "discrete: E applied to the raster (inverse crime)";
  }
  // Apply the mask, then noise on the sampled points.
  for (Index c = 0; c < c_count; ++c)
    for (Index i = 0; i < n; ++i)
      if (!mask.mask.data[static_cast<size_t>(i)]) k.data[static_cast<size_t>(c * n + i)] = cfloat(0.0f, 0.0f);
  double sigma = o.noise_sigma;
  if (std::isfinite(o.snr_db)) sigma = sigma_from_snr_db(k, mask.mask, o.snr_db);
  Rng rng = Rng::for_stream(o.seed, 0x6d7269);  // "mri": noise stream of this seed
  add_kspace_noise(k, mask.mask, sigma, o.coil_correlation, rng);

  Measurement m;
  m.modality = Modality::kMri;
  m.ny = ny;
  m.nx = nx;
  m.pixel_spacing_mm[0] = m.pixel_spacing_mm[1] = pixel_spacing_mm;
  MriData d;
  d.kspace = std::move(k);
  d.mask = mask.mask;
  d.coil_maps = std::move(maps);
  d.noise_sigma = sigma;
  d.pattern = mask.pattern;
  d.acceleration = mask.achieved_acceleration;
  d.coil_maps_source = "synthetic";
  d.spoke_angles_rad = mask.spoke_angles_rad;
  if (std::isfinite(o.snr_db)) d.numbers["snr_db"] = o.snr_db;
  d.numbers["coil_correlation"] = o.coil_correlation;
  d.numbers["seed"] = static_cast<double>(o.seed);
  d.numbers["coil_ring_radius"] = o.coil_array.ring_radius;
  d.texts["kspace_source"] = source;
  d.texts["truth"] = std::string(to_string(o.truth));
  m.mri = std::move(d);
  set_simulated_truth(m, analytic, raster, o.truth);
  return m;
}

}  // namespace recofold
