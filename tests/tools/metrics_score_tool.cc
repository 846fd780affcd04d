// SPDX-License-Identifier: Apache-2.0
// Test helper: scores IMAGE against REFERENCE with the metrics library and prints one JSON line.
//   metrics_score_tool REFERENCE IMAGE [DATA_RANGE [ROI]]
// Files are any image read_image_any accepts; complex images are scored by magnitude.
// A DATA_RANGE <= 0 means max - min of the reference.
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string>

#include "recofold/core/error.h"
#include "recofold/io/image_export.h"
#include "recofold/metrics/image_quality.h"

namespace {
const char* num(double v, char* buf) {
  if (std::isfinite(v))
    std::snprintf(buf, 40, "%.17g", v);
  else
    std::snprintf(buf, 40, "null");
  return buf;
}
}  // namespace

int main(int argc, char** argv) {
  using namespace recofold;
  if (argc < 3 || argc > 5) {
    std::fprintf(stderr, "usage: %s REFERENCE IMAGE [DATA_RANGE [ROI]]\n", argv[0]);
    return 2;
  }
  try {
    const ImageF ref = image_slice(read_image_any(argv[1]), 0, argv[1]);
    const ImageF img = image_slice(read_image_any(argv[2]), 0, argv[2]);
    ScoreOptions o;
    if (argc >= 4) o.data_range = std::strtod(argv[3], nullptr);
    if (argc >= 5) o.region = image_slice(read_image_any(argv[4]), 0, argv[4]);
    const Scores s = score_images(ref, img, o);
    char a[40], b[40], c[40], d[40], e[40];
    std::printf("{\"psnr\": %s, \"ssim\": %s, \"nrmse\": %s, \"hfen\": %s, \"data_range\": %s}\n", num(s.psnr, a),
                num(s.ssim, b), num(s.nrmse, c), num(s.hfen, d), num(s.data_range, e));
  } catch (const Error& e) {
    std::fprintf(stderr, "%s\n", e.what());
    return 2;
  }
  return 0;
}
