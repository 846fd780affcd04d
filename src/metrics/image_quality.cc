// SPDX-License-Identifier: Apache-2.0
// PSNR, SSIM, NRMSE and HFEN (definitions and sources in include/recofold/metrics/image_quality.h).
#include "recofold/metrics/image_quality.h"

#include <cmath>
#include <limits>
#include <vector>

#include "recofold/core/error.h"

namespace recofold {

namespace {

constexpr double kSsimSigma = 1.5;
constexpr int kSsimRadius = static_cast<int>(3.5 * kSsimSigma + 0.5);  // 5, as scikit-image
constexpr double kK1 = 0.01;
constexpr double kK2 = 0.03;
constexpr double kHfenSigma = 1.5;
constexpr int kHfenRadius = 7;  // 15 x 15

void check_image(const ImageF& img, const std::string& field) {
  if (img.size() == 0) throw InputError("", field, "image is empty");
  const float* d = img.data();
  for (Index i = 0; i < img.size(); ++i)
    if (!std::isfinite(d[i]))
      throw InputError("", field, "contains a non-finite value at flat index " + std::to_string(i));
}

void check_pair(const ImageF& reference, const ImageF& image, const ScoreOptions& options) {
  const auto errors = options.validate();
  if (!errors.empty()) throw InputError("", "score options", errors.front());
  check_image(reference, "reference");
  check_image(image, "image");
  if (reference.rows() != image.rows() || reference.cols() != image.cols())
    throw InputError("", "image",
                     "shape [" + std::to_string(image.rows()) + ", " + std::to_string(image.cols()) +
                         "] differs from the reference [" + std::to_string(reference.rows()) + ", " +
                         std::to_string(reference.cols()) + "]");
  if (options.region.size() != 0) {
    if (options.region.rows() != reference.rows() || options.region.cols() != reference.cols())
      throw InputError("", "region",
                       "shape [" + std::to_string(options.region.rows()) + ", " +
                           std::to_string(options.region.cols()) + "] differs from the images [" +
                           std::to_string(reference.rows()) + ", " + std::to_string(reference.cols()) + "]");
    if ((options.region != 0.f).count() == 0) throw InputError("", "region", "the region mask selects no pixel");
  }
}

bool inside(const ScoreOptions& o, Index i) { return o.region.size() == 0 || o.region.data()[i] != 0.f; }

double range_of(const ImageF& reference, const ScoreOptions& o) {
  if (o.data_range > 0) return o.data_range;
  const double r = static_cast<double>(reference.maxCoeff()) - static_cast<double>(reference.minCoeff());
  if (!(r > 0))
    throw InputError("", "reference", "is constant, so its data range (max - min) is 0; give the data range explicitly");
  return r;
}

// Normalised 1-D Gaussian weights at -radius..radius.
std::vector<double> gaussian_weights(double sigma, int radius) {
  std::vector<double> w(static_cast<size_t>(2 * radius + 1));
  double sum = 0;
  for (int k = -radius; k <= radius; ++k) {
    w[static_cast<size_t>(k + radius)] = std::exp(-0.5 * k * k / (sigma * sigma));
    sum += w[static_cast<size_t>(k + radius)];
  }
  for (double& v : w) v /= sum;
  return w;
}

// Separable weighted mean over the window, computed only where the window fits
// (rows/cols radius..n-1-radius); elsewhere NaN.
ImageD filter_valid(const ImageD& a, const std::vector<double>& w, int radius) {
  const Index ny = a.rows(), nx = a.cols();
  ImageD tmp = ImageD::Constant(ny, nx, 0.0);
  for (Index y = 0; y < ny; ++y)
    for (Index x = radius; x < nx - radius; ++x) {
      double s = 0;
      for (int k = -radius; k <= radius; ++k) s += w[static_cast<size_t>(k + radius)] * a(y, x + k);
      tmp(y, x) = s;
    }
  ImageD out = ImageD::Constant(ny, nx, std::numeric_limits<double>::quiet_NaN());
  for (Index y = radius; y < ny - radius; ++y)
    for (Index x = radius; x < nx - radius; ++x) {
      double s = 0;
      for (int k = -radius; k <= radius; ++k) s += w[static_cast<size_t>(k + radius)] * tmp(y + k, x);
      out(y, x) = s;
    }
  return out;
}

// Mirror index for "d c b a | a b c d" extension.
Index reflect(Index i, Index n) {
  if (n == 1) return 0;
  while (i < 0 || i >= n) {
    if (i < 0) i = -i - 1;
    if (i >= n) i = 2 * n - i - 1;
  }
  return i;
}

// 2-D correlation with a (2r+1)^2 kernel (symmetric, so also convolution), mirror edges.
ImageD filter_reflect(const ImageD& a, const ImageD& h) {
  const Index ny = a.rows(), nx = a.cols();
  const Index r = h.rows() / 2;
  ImageD out(ny, nx);
  for (Index y = 0; y < ny; ++y)
    for (Index x = 0; x < nx; ++x) {
      double s = 0;
      for (Index dy = -r; dy <= r; ++dy) {
        const Index yy = reflect(y + dy, ny);
        for (Index dx = -r; dx <= r; ++dx) s += h(dy + r, dx + r) * a(yy, reflect(x + dx, nx));
      }
      out(y, x) = s;
    }
  return out;
}

}  // namespace

std::vector<std::string> ScoreOptions::validate() const {
  std::vector<std::string> errors;
  if (!std::isfinite(data_range))
    errors.push_back("score.data_range = " + std::to_string(data_range) + "; must be finite (<= 0: automatic)");
  return errors;
}

double psnr(const ImageF& reference, const ImageF& image, const ScoreOptions& options) {
  check_pair(reference, image, options);
  const double L = range_of(reference, options);
  double se = 0;
  Index n = 0;
  for (Index i = 0; i < reference.size(); ++i) {
    if (!inside(options, i)) continue;
    const double d = static_cast<double>(image.data()[i]) - static_cast<double>(reference.data()[i]);
    se += d * d;
    ++n;
  }
  const double mse = se / static_cast<double>(n);
  if (mse == 0) return std::numeric_limits<double>::infinity();
  return 10.0 * std::log10(L * L / mse);
}

ImageD ssim_map(const ImageF& reference, const ImageF& image, double data_range) {
  const Index ny = reference.rows(), nx = reference.cols();
  const int r = kSsimRadius;
  if (ny < 2 * r + 1 || nx < 2 * r + 1)
    throw InputError("", "image", "is " + std::to_string(ny) + " x " + std::to_string(nx) + "; SSIM needs at least " +
                                      std::to_string(2 * r + 1) + " x " + std::to_string(2 * r + 1));
  const ImageD x = reference.cast<double>();
  const ImageD y = image.cast<double>();
  const auto w = gaussian_weights(kSsimSigma, r);
  const ImageD mx = filter_valid(x, w, r);
  const ImageD my = filter_valid(y, w, r);
  const ImageD mxx = filter_valid(x * x, w, r);
  const ImageD myy = filter_valid(y * y, w, r);
  const ImageD mxy = filter_valid(x * y, w, r);
  const double c1 = (kK1 * data_range) * (kK1 * data_range);
  const double c2 = (kK2 * data_range) * (kK2 * data_range);
  const ImageD vx = mxx - mx * mx;
  const ImageD vy = myy - my * my;
  const ImageD vxy = mxy - mx * my;
  return ((2 * mx * my + c1) * (2 * vxy + c2)) / ((mx * mx + my * my + c1) * (vx + vy + c2));
}

double ssim(const ImageF& reference, const ImageF& image, const ScoreOptions& options) {
  check_pair(reference, image, options);
  const ImageD map = ssim_map(reference, image, range_of(reference, options));
  double sum = 0;
  Index n = 0;
  for (Index i = 0; i < map.size(); ++i) {
    const double v = map.data()[i];
    if (std::isnan(v) || !inside(options, i)) continue;
    sum += v;
    ++n;
  }
  if (n == 0)
    throw InputError("", "region", "has no pixel at least " + std::to_string(kSsimRadius) +
                                       " pixels from the edge, where SSIM is defined");
  return sum / static_cast<double>(n);
}

double nrmse(const ImageF& reference, const ImageF& image, const ScoreOptions& options) {
  check_pair(reference, image, options);
  double se = 0, ref2 = 0;
  for (Index i = 0; i < reference.size(); ++i) {
    if (!inside(options, i)) continue;
    const double r = reference.data()[i];
    const double d = static_cast<double>(image.data()[i]) - r;
    se += d * d;
    ref2 += r * r;
  }
  if (ref2 == 0) throw InputError("", "reference", "is zero in the scored region, so NRMSE is undefined");
  return std::sqrt(se / ref2);
}

ImageD hfen_kernel() {
  const int r = kHfenRadius;
  const double s2 = kHfenSigma * kHfenSigma;
  ImageD g(2 * r + 1, 2 * r + 1);
  for (int y = -r; y <= r; ++y)
    for (int x = -r; x <= r; ++x) g(y + r, x + r) = std::exp(-(x * x + y * y) / (2 * s2));
  g /= g.sum();
  ImageD h(2 * r + 1, 2 * r + 1);
  for (int y = -r; y <= r; ++y)
    for (int x = -r; x <= r; ++x) h(y + r, x + r) = g(y + r, x + r) * (x * x + y * y - 2 * s2) / (s2 * s2);
  h -= h.mean();
  return h;
}

double hfen(const ImageF& reference, const ImageF& image, const ScoreOptions& options) {
  check_pair(reference, image, options);
  const ImageD h = hfen_kernel();
  const ImageD ref = reference.cast<double>();
  const ImageD diff = image.cast<double>() - ref;
  const ImageD lref = filter_reflect(ref, h);
  const ImageD ldiff = filter_reflect(diff, h);
  double num = 0, den = 0;
  for (Index i = 0; i < ref.size(); ++i) {
    if (!inside(options, i)) continue;
    num += ldiff.data()[i] * ldiff.data()[i];
    den += lref.data()[i] * lref.data()[i];
  }
  if (den == 0)
    throw InputError("", "reference", "has no high-frequency content in the scored region, so HFEN is undefined");
  return std::sqrt(num / den);
}

Scores score_images(const ImageF& reference, const ImageF& image, const ScoreOptions& options) {
  Scores s;
  s.data_range = (check_pair(reference, image, options), range_of(reference, options));
  ScoreOptions fixed = options;
  fixed.data_range = s.data_range;
  s.psnr = psnr(reference, image, fixed);
  s.ssim = ssim(reference, image, fixed);
  s.nrmse = nrmse(reference, image, fixed);
  s.hfen = hfen(reference, image, fixed);
  return s;
}

ImageF magnitude(const ImageC& z) { return z.abs(); }

}  // namespace recofold
