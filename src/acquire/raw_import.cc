// SPDX-License-Identifier: Apache-2.0
// Raw Cartesian k-space to an MRI measurement (formulas in include/recofold/acquire/raw_import.h).
#include "recofold/acquire/raw_import.h"

#include <Eigen/Cholesky>
#include <Eigen/Dense>

#include <algorithm>
#include <cmath>
#include <sstream>

#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/ops/fft.h"

namespace recofold {

namespace {

// Median of |values| (values is reordered).
double median_abs(std::vector<double>& v) {
  for (double& x : v) x = std::abs(x);
  const size_t mid = v.size() / 2;
  std::nth_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(mid), v.end());
  double m = v[mid];
  if (v.size() % 2 == 0 && mid > 0) {
    const double lower = *std::max_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(mid));
    m = 0.5 * (m + lower);
  }
  return m;
}

}  // namespace

double estimate_kspace_noise_sigma(const NdArray<cfloat>& kspace, const NdArray<uint8_t>& mask) {
  RECOFOLD_CHECK(kspace.shape.rank() == 3) << kspace.shape.to_string();
  const Index coils = kspace.shape[0], ny = kspace.shape[1], nx = kspace.shape[2];
  RECOFOLD_CHECK(mask.shape == (Shape{ny, nx})) << mask.shape.to_string();
  Index sampled = 0;
  for (uint8_t m : mask.data) sampled += m ? 1 : 0;
  if (sampled == 0 || ny < 2 || nx < 2) return 0.0;
  NdArray<cfloat> images = kspace;
  fft2c_stack(images, FftDirection::kInverse);
  std::vector<double> w;
  w.reserve(static_cast<size_t>(coils * (ny / 2) * (nx / 2) * 2));
  for (Index c = 0; c < coils; ++c) {
    const cfloat* img = images.ptr() + c * ny * nx;
    for (Index y = 0; y + 1 < ny; y += 2)
      for (Index x = 0; x + 1 < nx; x += 2) {
        // Orthonormal Haar diagonal detail: (a - b - c + d) / 2.
        const cfloat v = (img[y * nx + x] - img[y * nx + x + 1] - img[(y + 1) * nx + x] + img[(y + 1) * nx + x + 1]) * 0.5f;
        w.push_back(v.real());
        w.push_back(v.imag());
      }
  }
  const double sigma_image = median_abs(w) / 0.6745;
  const double fraction = static_cast<double>(sampled) / static_cast<double>(ny * nx);
  return sigma_image / std::sqrt(fraction);
}

namespace {

// The noise level of an import and where it came from.
struct ImportNoise {
  double sigma = -1.0;  // < 0: not known yet
  std::string source, whitening = "none (no noise-adjust scans)";
};

// 1. Pre-whitening of k (in place) by the noise scans' covariance (scaled by the dwell-time
// ratio), or only their mean level when options.prewhiten is off.
ImportNoise prewhiten(const RawCartesian& raw, const RawImportOptions& options, const std::string& file,
                      NdArray<cfloat>& k) {
  ImportNoise n;
  if (raw.noise_covariance.empty()) return n;
  const Index coils = raw.coils, ey = raw.ey, ex = raw.ex;
  RECOFOLD_CHECK(raw.noise_covariance.size() == static_cast<size_t>(coils * coils));
  Eigen::MatrixXcd cov(coils, coils);
  for (Index a = 0; a < coils; ++a)
    for (Index b = 0; b < coils; ++b) cov(a, b) = raw.noise_covariance[static_cast<size_t>(a * coils + b)];
  cov = 0.5 * (cov + cov.adjoint().eval());
  double dwell_scale = 1.0;
  if (raw.noise_dwell_us > 0 && raw.dwell_us > 0) dwell_scale = raw.noise_dwell_us / raw.dwell_us;
  cov *= dwell_scale;
  const double s2 = cov.trace().real() / static_cast<double>(coils);
  const std::string scans = std::to_string(raw.noise_samples) + " noise samples per channel";
  if (options.prewhiten) {
    if (raw.noise_samples < coils)
      throw InputError(file, "/dataset/data",
                       scans + " cannot estimate the " + std::to_string(coils) + " x " + std::to_string(coils) +
                           " noise covariance (need at least one sample per channel)");
    Eigen::LLT<Eigen::MatrixXcd> llt(cov);
    bool ok = llt.info() == Eigen::Success && s2 > 0;
    Eigen::MatrixXcd w;
    if (ok) {
      const Eigen::MatrixXcd l = llt.matrixL();
      w = l.triangularView<Eigen::Lower>().solve(Eigen::MatrixXcd::Identity(coils, coils)) * std::sqrt(s2);
      ok = w.allFinite();
      for (Index a = 0; a < coils && ok; ++a) ok = l(a, a).real() > 1e-9 * std::sqrt(s2);
    }
    if (!ok)
      throw InputError(file, "/dataset/data",
                       "the noise covariance from " + scans +
                           " is not positive definite (a channel without noise, or two identical channels); "
                           "import without pre-whitening");
    const Index np = ey * ex;
    Eigen::VectorXcd v(coils);
    for (Index p = 0; p < np; ++p) {
      if (!raw.sampled.data[static_cast<size_t>(p)]) continue;
      for (Index c = 0; c < coils; ++c) v(c) = cdouble(k.data[static_cast<size_t>(c * np + p)]);
      const Eigen::VectorXcd out = w * v;
      for (Index c = 0; c < coils; ++c) k.data[static_cast<size_t>(c * np + p)] = cfloat(out(c));
    }
    n.sigma = std::sqrt(s2 / 2.0);
    n.source = "noise-adjust scans (" + scans + ", pre-whitened)";
    n.whitening = "applied: covariance of " + scans + (dwell_scale != 1.0 ? ", scaled by the dwell-time ratio " + format_sig(dwell_scale, 6) : std::string());
  } else {
    n.sigma = std::sqrt(s2 / 2.0);
    n.source = "noise-adjust scans (" + scans + ", channels not whitened: mean level)";
    n.whitening = "not applied (asked not to)";
  }
  return n;
}

// 2. Readout oversampling removal: each sampled line cropped to the central `keep` samples in
// image space (keep = ex: copied), the mask resampled to the new columns.
void remove_readout_oversampling(const RawCartesian& raw, const NdArray<cfloat>& k, Index keep,
                                 NdArray<cfloat>& kspace, NdArray<uint8_t>& mask) {
  const Index coils = raw.coils, ey = raw.ey, ex = raw.ex;
  kspace = NdArray<cfloat>(Shape{coils, ey, keep});
  mask = NdArray<uint8_t>(Shape{ey, keep});
  const Index start = ex / 2 - keep / 2;
  std::vector<cfloat> line(static_cast<size_t>(ex));
  for (Index r = 0; r < ey; ++r) {
    bool any = false;
    for (Index c = 0; c < ex && !any; ++c) any = raw.sampled.data[static_cast<size_t>(r * ex + c)] != 0;
    if (!any) continue;
    for (Index j = 0; j < keep; ++j) {
      const double pos = static_cast<double>(ex / 2) + static_cast<double>(j - keep / 2) * static_cast<double>(ex) /
                                                            static_cast<double>(keep);
      const Index old = std::clamp<Index>(static_cast<Index>(std::lround(pos)), 0, ex - 1);
      mask.data[static_cast<size_t>(r * keep + j)] = raw.sampled.data[static_cast<size_t>(r * ex + old)];
    }
    for (Index c = 0; c < coils; ++c) {
      const cfloat* src = k.ptr() + (c * ey + r) * ex;
      cfloat* dst = kspace.ptr() + (c * ey + r) * keep;
      if (keep == ex) {
        std::copy(src, src + ex, dst);
      } else {
        std::copy(src, src + ex, line.begin());
        fft2c(line.data(), line.data(), 1, ex, FftDirection::kInverse);
        fft2c(line.data() + start, dst, 1, keep, FftDirection::kForward);
      }
      for (Index j = 0; j < keep; ++j)
        if (!mask.data[static_cast<size_t>(r * keep + j)]) dst[j] = cfloat(0, 0);
    }
  }
}

// The raw header's facts in the measurement's provenance ("raw.*").
void record_raw_provenance(const RawCartesian& raw, Measurement& m) {
  const Index ey = raw.ey, ex = raw.ex;
  for (const auto& [key, value] : raw.header_texts) m.provenance.extra["raw." + key] = value;
  m.provenance.extra["raw.trajectory"] = raw.trajectory;
  m.provenance.extra["raw.encoded_matrix"] = std::to_string(ex) + " x " + std::to_string(ey);
  m.provenance.extra["raw.encoded_fov_mm"] = format_sig(raw.encoded_fov_mm[0], 6) + " x " + format_sig(raw.encoded_fov_mm[1], 6) + " x " +
                                             format_sig(raw.encoded_fov_mm[2], 6);
  m.provenance.extra["raw.recon_matrix"] = std::to_string(raw.recon_matrix[0]) + " x " + std::to_string(raw.recon_matrix[1]);
  m.provenance.extra["raw.recon_fov_mm"] = format_sig(raw.recon_fov_mm[0], 6) + " x " + format_sig(raw.recon_fov_mm[1], 6) + " x " +
                                           format_sig(raw.recon_fov_mm[2], 6);
  m.provenance.extra["raw.acquisitions"] = std::to_string(raw.acquisitions);
  m.provenance.extra["raw.noise_acquisitions"] = std::to_string(raw.noise_acquisitions);
  std::string skipped;
  for (const auto& [kind, n] : raw.skipped) skipped += (skipped.empty() ? "" : ", ") + kind + " " + std::to_string(n);
  m.provenance.extra["raw.skipped"] = skipped.empty() ? "none" : skipped;
}

}  // namespace

Measurement measurement_from_raw(const RawCartesian& raw, const RawImportOptions& options, const std::string& file) {
  const Index coils = raw.coils, ey = raw.ey, ex = raw.ex;
  RECOFOLD_CHECK(raw.kspace.shape == (Shape{coils, ey, ex})) << raw.kspace.shape.to_string();
  RECOFOLD_CHECK(raw.sampled.shape == (Shape{ey, ex})) << raw.sampled.shape.to_string();
  const Index keep = raw.readout_keep > 0 ? std::min(raw.readout_keep, ex) : ex;
  NdArray<cfloat> k = raw.kspace;
  MriData mri;
  // 1. Pre-whitening.
  const ImportNoise noise = prewhiten(raw, options, file, k);
  double sigma = noise.sigma;
  std::string noise_source = noise.source;
  const std::string whitening = noise.whitening;
  // 2. Readout oversampling removal.
  NdArray<cfloat> kspace;
  NdArray<uint8_t> mask;
  remove_readout_oversampling(raw, k, keep, kspace, mask);
  // 3. Noise level without noise scans.
  if (sigma < 0 && raw.header_noise_sigma) {
    sigma = *raw.header_noise_sigma;
    noise_source = "stated in the raw header (user parameter recofold.noise_sigma)";
  }
  if (sigma < 0) {
    sigma = estimate_kspace_noise_sigma(kspace, mask);
    noise_source = "estimated from the data (median absolute finest Haar coefficient / 0.6745)";
  }

  Index sampled = 0;
  for (uint8_t m : mask.data) sampled += m ? 1 : 0;
  Measurement m;
  m.modality = Modality::kMri;
  m.ny = ey;
  m.nx = keep;
  m.pixel_spacing_mm[0] = raw.encoded_fov_mm[1] / static_cast<double>(ey);
  m.pixel_spacing_mm[1] = raw.encoded_fov_mm[0] / static_cast<double>(ex);
  mri.kspace = std::move(kspace);
  mri.mask = std::move(mask);
  mri.noise_sigma = sigma;
  mri.pattern = sampled == ey * keep ? "full" : "acquired";
  mri.acceleration = sampled > 0 ? static_cast<double>(ey * keep) / static_cast<double>(sampled) : 0.0;
  mri.coil_maps_source = "";
  mri.numbers["readout_oversampling"] = static_cast<double>(ex) / static_cast<double>(keep);
  mri.numbers["noise_samples"] = static_cast<double>(raw.noise_samples);
  mri.numbers["averages"] = raw.averages_used;
  mri.numbers["lines"] = static_cast<double>(raw.selected_lines);
  if (raw.encoded_fov_mm[2] > 0) mri.numbers["slice_thickness_mm"] = raw.encoded_fov_mm[2];
  mri.texts["kspace_source"] = "ISMRMRD raw data";
  mri.texts["noise_sigma_source"] = noise_source;
  mri.texts["prewhitening"] = whitening;
  m.mri = std::move(mri);
  record_raw_provenance(raw, m);
  return m;
}

}  // namespace recofold
