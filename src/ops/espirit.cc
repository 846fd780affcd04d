// SPDX-License-Identifier: Apache-2.0
// ESPIRiT coil maps (method and formulas in include/recofold/ops/espirit.h).
#include "recofold/ops/espirit.h"

#include <Eigen/Dense>
#include <Eigen/Eigenvalues>
#include <Eigen/SVD>

#include <algorithm>
#include <cmath>
#include <sstream>

#include "recofold/core/error.h"
#include "recofold/core/number_format.h"

namespace recofold {

namespace {

constexpr double kPi = 3.14159265358979323846;

// The calibration block: the mask's fully sampled centre, cropped to at most
// `size` per axis around the k-space centre.
CalibrationRegion crop_region(const CalibrationRegion& r, Index ny, Index nx, int size) {
  CalibrationRegion out = r;
  auto crop = [size](Index start, Index len, Index centre, Index& out_start, Index& out_len) {
    if (len <= size) return;
    out_len = size;
    out_start = std::clamp<Index>(centre - size / 2, start, start + len - size);
  };
  crop(r.row0, r.rows, ny / 2, out.row0, out.rows);
  crop(r.col0, r.cols, nx / 2, out.col0, out.cols);
  return out;
}

}  // namespace

std::vector<std::string> EspiritOptions::validate() const {
  std::vector<std::string> e;
  if (kernel_size < 2 || kernel_size > 16)
    e.push_back("espirit.kernel_size = " + std::to_string(kernel_size) + "; must be 2..16");
  if (calibration_size < kernel_size || calibration_size > 256)
    e.push_back("espirit.calibration_size = " + std::to_string(calibration_size) + "; must be kernel_size .. 256");
  if (!(singular_threshold > 0.0 && singular_threshold < 1.0))
    e.push_back("espirit.singular_threshold = " + format_sig(singular_threshold, 4) + "; must be in (0, 1)");
  if (!(crop_threshold >= 0.0 && crop_threshold < 1.0))
    e.push_back("espirit.crop_threshold = " + format_sig(crop_threshold, 4) + "; must be in [0, 1)");
  return e;
}

EspiritResult espirit_maps(const NdArray<cfloat>& kspace, const NdArray<uint8_t>& mask, const EspiritOptions& o,
                           const std::string& file) {
  {
    const auto errors = o.validate();
    if (!errors.empty()) {
      const std::string& first = errors.front();
      throw InputError(file, first.substr(0, first.find(' ')), first);
    }
  }
  if (kspace.shape.rank() != 3 || kspace.shape[0] < 1)
    throw InputError(file, "/mri/kspace", "shape " + kspace.shape.to_string() + ", expected [coils, ny, nx]");
  const Index coils = kspace.shape[0], ny = kspace.shape[1], nx = kspace.shape[2];
  if (mask.shape != (Shape{ny, nx}))
    throw InputError(file, "/mri/mask", "shape " + mask.shape.to_string() + ", expected [" + std::to_string(ny) + ", " +
                                            std::to_string(nx) + "] of the k-space");
  const int k = o.kernel_size;
  const CalibrationRegion full = find_calibration_region(mask);
  if (full.rows < k + 1 || full.cols < k + 1)
    throw InputError(file, "/mri/mask",
                     "the fully sampled centre is " + std::to_string(full.rows) + "x" + std::to_string(full.cols) +
                         "; ESPIRiT with a " + std::to_string(k) + "x" + std::to_string(k) +
                         " kernel needs at least " + std::to_string(k + 1) + "x" + std::to_string(k + 1) +
                         " (use a mask with a larger calibration region, or the low-resolution estimate)");
  const CalibrationRegion cal = crop_region(full, ny, nx, o.calibration_size);

  // 1. Calibration matrix.
  const Index wy = cal.rows - k + 1, wx = cal.cols - k + 1;
  const Index rows = wy * wx, cols = static_cast<Index>(k) * k * coils;
  Eigen::MatrixXcd a(rows, cols);
  const Index n = ny * nx;
  for (Index py = 0; py < wy; ++py)
    for (Index px = 0; px < wx; ++px) {
      const Index row = py * wx + px;
      for (Index c = 0; c < coils; ++c)
        for (int qy = 0; qy < k; ++qy)
          for (int qx = 0; qx < k; ++qx) {
            const Index p = (cal.row0 + py + qy) * nx + (cal.col0 + px + qx);
            a(row, c * k * k + qy * k + qx) = cdouble(kspace.data[static_cast<size_t>(c * n + p)]);
          }
    }

  // 2. SVD and the signal subspace.
  Eigen::BDCSVD<Eigen::MatrixXcd> svd(a, Eigen::ComputeThinV);
  const Eigen::VectorXd& sv = svd.singularValues();
  EspiritResult result;
  result.calibration = cal;
  result.kernel_columns = static_cast<int>(cols);
  result.maps = NdArray<cfloat>(Shape{coils, ny, nx});
  result.eigenvalues = NdArray<float>(Shape{ny, nx});
  if (sv.size() == 0 || !(sv(0) > 0)) {
    result.summary = "ESPIRiT: the calibration data are zero; no maps";
    return result;
  }
  Index kept = 0;
  while (kept < sv.size() && sv(kept) > o.singular_threshold * sv(0)) ++kept;
  result.kernels = static_cast<int>(kept);
  // Each window w (a row of A) is Σ_j (u_j σ_j) v_jᴴ, so as a column vector it
  // lies in the span of conj(v_j): the projection onto the signal subspace is
  // P = conj(V) conj(V)ᴴ.
  const Eigen::MatrixXcd v = svd.matrixV().leftCols(kept).conjugate();
  const Eigen::MatrixXcd proj = v * v.adjoint();  // P, [k² C, k² C]

  // 3. g_{c c'}(d) for d in [-(k-1), k-1]^2, stored [c][c'][dy][dx].
  const int span = 2 * k - 1;
  const size_t pair_size = static_cast<size_t>(span * span);
  std::vector<cdouble> g(static_cast<size_t>(coils * coils) * pair_size, cdouble(0, 0));
  const double inv_m = 1.0 / (static_cast<double>(k) * k);
  for (Index c = 0; c < coils; ++c)
    for (Index c2 = 0; c2 < coils; ++c2) {
      cdouble* gp = g.data() + static_cast<size_t>(c * coils + c2) * pair_size;
      for (int qy = 0; qy < k; ++qy)
        for (int qx = 0; qx < k; ++qx)
          for (int ry = 0; ry < k; ++ry)
            for (int rx = 0; rx < k; ++rx) {
              const int dy = qy - ry + k - 1, dx = qx - rx + k - 1;
              gp[dy * span + dx] += proj(c * k * k + qy * k + qx, c2 * k * k + ry * k + rx) * inv_m;
            }
    }
  // Separable evaluation: h(c, c', dy, x) = Σ_dx g(c, c', dy, dx) e^{i2π dx (x - nx/2)/nx}.
  std::vector<cdouble> ex(static_cast<size_t>(span * nx)), ey(static_cast<size_t>(span * ny));
  for (int d = 0; d < span; ++d) {
    const double dd = d - (k - 1);
    for (Index x = 0; x < nx; ++x)
      ex[static_cast<size_t>(d * nx + x)] = std::polar(1.0, 2 * kPi * dd * static_cast<double>(x - nx / 2) / nx);
    for (Index y = 0; y < ny; ++y)
      ey[static_cast<size_t>(d * ny + y)] = std::polar(1.0, 2 * kPi * dd * static_cast<double>(y - ny / 2) / ny);
  }
  const size_t h_pair = static_cast<size_t>(span * nx);
  std::vector<cdouble> h(static_cast<size_t>(coils * coils) * h_pair, cdouble(0, 0));
  for (Index pc = 0; pc < coils * coils; ++pc) {
    const cdouble* gp = g.data() + static_cast<size_t>(pc) * pair_size;
    cdouble* hp = h.data() + static_cast<size_t>(pc) * h_pair;
    for (int dy = 0; dy < span; ++dy)
      for (int dx = 0; dx < span; ++dx) {
        const cdouble gv = gp[dy * span + dx];
        if (gv == cdouble(0, 0)) continue;
        const cdouble* e = ex.data() + static_cast<size_t>(dx * nx);
        cdouble* out = hp + static_cast<size_t>(dy * nx);
        for (Index x = 0; x < nx; ++x) out[x] += gv * e[x];
      }
  }

  // 4. Per-pixel eigenvectors, row by row.
#pragma omp parallel for schedule(dynamic, 4)
  for (Index y = 0; y < ny; ++y) {
    Eigen::MatrixXcd gm(coils, coils);
    Eigen::SelfAdjointEigenSolver<Eigen::MatrixXcd> eig;
    for (Index x = 0; x < nx; ++x) {
      for (Index c = 0; c < coils; ++c)
        for (Index c2 = c; c2 < coils; ++c2) {
          const cdouble* hp = h.data() + static_cast<size_t>(c * coils + c2) * h_pair;
          cdouble s(0, 0);
          for (int dy = 0; dy < span; ++dy) s += hp[static_cast<size_t>(dy * nx + x)] * ey[static_cast<size_t>(dy * ny + y)];
          gm(c, c2) = s;
          gm(c2, c) = std::conj(s);
        }
      eig.compute(gm);
      const double lambda = eig.eigenvalues()(coils - 1);
      result.eigenvalues.data[static_cast<size_t>(y * nx + x)] = static_cast<float>(lambda);
      if (!(lambda >= o.crop_threshold)) continue;
      const Eigen::VectorXcd vec = eig.eigenvectors().col(coils - 1);
      for (Index c = 0; c < coils; ++c)
        result.maps.data[static_cast<size_t>(c * n + y * nx + x)] = cfloat(vec(c));
    }
  }

  // 5. A common phase reference.
  Eigen::MatrixXcd acc = Eigen::MatrixXcd::Zero(coils, coils);
  Eigen::VectorXcd m(coils);
  for (Index p = 0; p < n; ++p) {
    for (Index c = 0; c < coils; ++c) m(c) = cdouble(result.maps.data[static_cast<size_t>(c * n + p)]);
    acc.noalias() += m * m.adjoint();
  }
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXcd> ref_eig(acc);
  const Eigen::VectorXcd ref = ref_eig.eigenvectors().col(coils - 1);
  for (Index p = 0; p < n; ++p) {
    for (Index c = 0; c < coils; ++c) m(c) = cdouble(result.maps.data[static_cast<size_t>(c * n + p)]);
    const cdouble proj_ref = ref.dot(m);  // refᴴ m
    if (std::abs(proj_ref) == 0.0) continue;
    const cdouble rot = std::conj(proj_ref) / std::abs(proj_ref);
    for (Index c = 0; c < coils; ++c)
      result.maps.data[static_cast<size_t>(c * n + p)] = cfloat(m(c) * rot);
  }
  result.summary = "ESPIRiT " + std::to_string(k) + "x" + std::to_string(k) + " kernel, " + std::to_string(cal.rows) +
                   "x" + std::to_string(cal.cols) + " calibration, " + std::to_string(kept) + " of " +
                   std::to_string(std::min(rows, cols)) + " singular vectors (> " + format_sig(o.singular_threshold, 4) +
                   " sigma1), crop " + format_sig(o.crop_threshold, 4);
  return result;
}

ImageF map_subspace_error(const NdArray<cfloat>& est, const NdArray<cfloat>& ref) {
  RECOFOLD_CHECK(est.shape == ref.shape && est.shape.rank() == 3) << est.shape.to_string() << " vs " << ref.shape.to_string();
  const Index coils = est.shape[0], ny = est.shape[1], nx = est.shape[2], n = ny * nx;
  ImageF err(ny, nx);
  for (Index p = 0; p < n; ++p) {
    double mm = 0, ss = 0;
    cdouble dot(0, 0);
    for (Index c = 0; c < coils; ++c) {
      const cdouble e(est.data[static_cast<size_t>(c * n + p)]), s(ref.data[static_cast<size_t>(c * n + p)]);
      mm += std::norm(e);
      ss += std::norm(s);
      dot += std::conj(e) * s;
    }
    double v = 0.0;
    if (ss > 0) v = mm > 0 ? std::sqrt(std::max(0.0, 1.0 - std::norm(dot) / (mm * ss))) : 1.0;
    err.data()[p] = static_cast<float>(v);
  }
  return err;
}

}  // namespace recofold
