// SPDX-License-Identifier: Apache-2.0
// Full-reference image quality: PSNR, SSIM, NRMSE, HFEN, with an optional region mask.
//
// All functions take real images (for complex data pass the magnitude, see
// magnitude()), accumulate in double, and compare `image` against `reference`
// of the same shape. Definitions (DEVELOPERS.md "Sources", "Metrics"):
//
//   PSNR  = 10 log10(L^2 / MSE), MSE = mean over the region of (image - reference)^2.
//           L = data range: ScoreOptions::data_range if > 0, else max - min of the
//           whole reference image. +inf when MSE = 0.
//           Check: skimage.metrics.peak_signal_noise_ratio(ref, img, data_range=L).
//   SSIM  Wang, Bovik, Sheikh & Simoncelli, IEEE TIP 13(4):600-612 (2004), with
//           K1 = 0.01, K2 = 0.03, C1 = (K1 L)^2, C2 = (K2 L)^2 and local statistics
//           from a Gaussian window, sigma = 1.5, truncated at radius
//           r = int(3.5 sigma + 0.5) = 5 (11 x 11 window, normalised weights);
//           population (not sample) covariances:
//             SSIM(p) = (2 mx my + C1)(2 sxy + C2) / ((mx^2 + my^2 + C1)(sx^2 + sy^2 + C2)).
//           The mean is taken over pixels at least r from every edge (where the
//           window fits), intersected with the region. Images must be at least 11 x 11.
//           Check: skimage.metrics.structural_similarity(ref, img, data_range=L,
//           gaussian_weights=True, sigma=1.5, use_sample_covariance=False).
//   NRMSE = ||image - reference||_2 / ||reference||_2 over the region.
//           Check: skimage.metrics.normalized_root_mse(ref, img, normalization="euclidean").
//   HFEN  Ravishankar & Bresler, IEEE TMI 30(5):1028-1041 (2011): relative l2 error
//           after a 15 x 15 Laplacian-of-Gaussian filter, sigma = 1.5:
//             HFEN = ||LoG * (image - reference)||_2 / ||LoG * reference||_2 over the region.
//           Kernel (our choice, in the manner of MATLAB's fspecial('log'), from memory):
//             g(x, y) = exp(-(x^2 + y^2) / (2 sigma^2)) / sum(g),  x, y in -7..7
//             h(x, y) = g(x, y) (x^2 + y^2 - 2 sigma^2) / sigma^4,  then h -= mean(h)
//           so that h sums to zero; edges are extended by mirror reflection
//           (d c b a | a b c d). Check: our own independent reimplementation with
//           scipy.ndimage.gaussian_laplace (tests/reference/metrics_skimage.py).
//
// Region: an optional mask of the same shape; pixels with value != 0 count.
// Bad input (shapes differ, empty or non-finite images, empty region, image
// smaller than the SSIM window) throws InputError(field = "reference"/"image"/"region").
#pragma once

#include <string>
#include <vector>

#include "recofold/core/types.h"

namespace recofold {

struct ScoreOptions {
  // Data range L for PSNR and SSIM; <= 0 means max - min of the reference.
  double data_range = 0.0;
  // Optional region mask, same shape as the images (nonzero = inside). Empty
  // (0 x 0) means the whole image.
  ImageF region;

  // Every violation ("score.data_range = nan; must be finite"); empty means valid.
  std::vector<std::string> validate() const;
};

struct Scores {
  double psnr = 0.0;   // dB
  double ssim = 0.0;   // dimensionless, <= 1
  double nrmse = 0.0;  // dimensionless
  double hfen = 0.0;   // dimensionless
  double data_range = 0.0;  // the L actually used
};

// All four metrics at once.
Scores score_images(const ImageF& reference, const ImageF& image, const ScoreOptions& options = {});

double psnr(const ImageF& reference, const ImageF& image, const ScoreOptions& options = {});
double ssim(const ImageF& reference, const ImageF& image, const ScoreOptions& options = {});
double nrmse(const ImageF& reference, const ImageF& image, const ScoreOptions& options = {});
double hfen(const ImageF& reference, const ImageF& image, const ScoreOptions& options = {});

// Per-pixel SSIM map (same shape as the inputs; pixels nearer than 5 to an
// edge, where the window does not fit, are NaN). `data_range` as in ScoreOptions.
ImageD ssim_map(const ImageF& reference, const ImageF& image, double data_range);

// The 15 x 15 zero-sum LoG kernel used by hfen() (sigma = 1.5), row-major.
ImageD hfen_kernel();

// |z| of a complex image, for scoring complex reconstructions.
ImageF magnitude(const ImageC& z);

}  // namespace recofold
