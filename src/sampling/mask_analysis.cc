// SPDX-License-Identifier: Apache-2.0
// Point-spread and transform point-spread analysis of sampling masks, and the mask + PSF picture.
#include "recofold/sampling/mask_analysis.h"

#include <algorithm>
#include <cmath>

#include "recofold/core/error.h"
#include "recofold/core/json.h"
#include "recofold/ops/fft.h"
#include "recofold/ops/fourier.h"

namespace recofold {

std::string MaskAnalysis::to_json() const {
  JsonObjectWriter calib;
  calib.add("rows", calibration.rows);
  calib.add("cols", calibration.cols);
  calib.add("row0", calibration.row0);
  calib.add("col0", calibration.col0);
  JsonArrayWriter levels;
  for (const TpsfLevel& l : tpsf_levels) {
    JsonObjectWriter o;
    o.add("level", l.level);
    o.add("sidelobe_ratio", l.sidelobe_ratio);
    levels.add(o);
  }
  JsonObjectWriter w;
  w.add("ny", ny);
  w.add("nx", nx);
  w.add("samples", samples);
  w.add("acceleration", acceleration);
  w.add("calibration", calib);
  w.add("psf_peak", psf_peak);
  w.add("psf_sidelobe_ratio", psf_sidelobe_ratio);
  w.add("psf_sidelobe_db", psf_sidelobe_ratio > 0 ? 20.0 * std::log10(psf_sidelobe_ratio) : -INFINITY);
  w.add("psf_sidelobe_offset", std::vector<Index>{psf_sidelobe_dy, psf_sidelobe_dx});
  if (tpsf_sidelobe_ratio < 0)
    w.add_null("tpsf_sidelobe_ratio");  // not analysed (odd sizes)
  else
    w.add("tpsf_sidelobe_ratio", tpsf_sidelobe_ratio);
  w.add("tpsf_levels", levels);
  w.add("wavelet", wavelet);
  return w.str();
}

MaskAnalysis analyse_mask(const NdArray<uint8_t>& mask, const MaskAnalysisOptions& o) {
  RECOFOLD_CHECK(mask.shape.rank() == 2 && mask.size() > 0) << "mask shape " << mask.shape.to_string();
  MaskAnalysis a;
  a.ny = mask.shape[0];
  a.nx = mask.shape[1];
  const Index ny = a.ny, nx = a.nx, n = ny * nx;
  for (uint8_t v : mask.data) a.samples += v ? 1 : 0;
  RECOFOLD_CHECK(a.samples > 0) << "the mask samples no point";
  a.acceleration = static_cast<double>(n) / static_cast<double>(a.samples);
  a.calibration = find_calibration_region(mask);

  // PSF = F^H m.
  ImageC m(ny, nx);
  for (Index i = 0; i < n; ++i) m.data()[i] = cfloat(mask.data[static_cast<size_t>(i)] ? 1.0f : 0.0f, 0.0f);
  const ImageC psf = ifft2c(m);
  const Index cy = ny / 2, cx = nx / 2;
  a.psf_peak = std::abs(psf(cy, cx));
  a.psf_magnitude = psf.abs() / static_cast<float>(a.psf_peak);
  const int w = std::max(0, o.main_lobe_halfwidth);
  double side = 0.0;
  for (Index iy = 0; iy < ny; ++iy)
    for (Index ix = 0; ix < nx; ++ix) {
      if (std::abs(iy - cy) <= w && std::abs(ix - cx) <= w) continue;
      const double v = a.psf_magnitude(iy, ix);
      if (v > side) {
        side = v;
        a.psf_sidelobe_dy = iy - cy;
        a.psf_sidelobe_dx = ix - cx;
      }
    }
  a.psf_sidelobe_ratio = side;

  // TPSF with the largest level count the grid allows (up to the requested one).
  int levels = 0;
  for (int l = 1; l <= o.wavelet_levels; ++l) {
    const Index d = Index(1) << l;
    if (ny % d == 0 && nx % d == 0 && ny / d >= 2 && nx / d >= 2) levels = l;
  }
  if (levels > 0) {
    const WaveletTransform wt(Shape{ny, nx}, o.wavelet, levels);
    const MaskedFourier e(ny, nx, mask);
    a.wavelet = std::string(to_string(o.wavelet)) + ", " + std::to_string(levels) + " level" + (levels > 1 ? "s" : "");
    const auto bands = wt.sub_bands();
    std::vector<double> worst(static_cast<size_t>(levels + 1), 0.0);
    VecC coef = VecC::Zero(n), img, normal_img, out;
    for (const SubBand& b : bands) {
      if (b.orientation == SubBandOrientation::kApproximation) continue;
      const Index i = (b.row0 + b.rows / 2) * nx + (b.col0 + b.cols / 2);
      coef.setZero();
      coef[i] = cfloat(1.0f, 0.0f);
      wt.adjoint(coef, img);
      e.normal(img, normal_img);
      wt.apply(normal_img, out);
      const double centre = std::abs(out[i]);
      double off = 0.0;
      for (Index j = 0; j < n; ++j)
        if (j != i) off = std::max(off, static_cast<double>(std::abs(out[j])));
      const double ratio = centre > 0 ? off / centre : INFINITY;
      worst[static_cast<size_t>(b.level)] = std::max(worst[static_cast<size_t>(b.level)], ratio);
    }
    a.tpsf_sidelobe_ratio = 0.0;
    for (int l = 1; l <= levels; ++l) {
      a.tpsf_levels.push_back(TpsfLevel{l, worst[static_cast<size_t>(l)]});
      a.tpsf_sidelobe_ratio = std::max(a.tpsf_sidelobe_ratio, worst[static_cast<size_t>(l)]);
    }
  } else {
    a.wavelet = "none (grid sides not even)";
  }
  return a;
}

ImageF mask_picture(const NdArray<uint8_t>& mask, const MaskAnalysis& a, double floor_db) {
  RECOFOLD_CHECK(mask.shape == (Shape{a.ny, a.nx})) << "mask and analysis differ in shape";
  RECOFOLD_CHECK(floor_db < 0) << "floor_db must be negative";
  const Index ny = a.ny, nx = a.nx, gap = 4;
  ImageF pic = ImageF::Constant(ny, 2 * nx + gap, 0.5f);
  for (Index iy = 0; iy < ny; ++iy)
    for (Index ix = 0; ix < nx; ++ix) {
      pic(iy, ix) = mask.data[static_cast<size_t>(iy * nx + ix)] ? 1.0f : 0.0f;
      const double v = a.psf_magnitude(iy, ix);
      const double db = v > 0 ? 20.0 * std::log10(v) : floor_db;
      pic(iy, nx + gap + ix) = static_cast<float>(std::clamp((db - floor_db) / -floor_db, 0.0, 1.0));
    }
  return pic;
}

}  // namespace recofold
