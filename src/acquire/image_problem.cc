// SPDX-License-Identifier: Apache-2.0
// Denoising and inpainting measurements (acquire/image_problem.h).
#include "recofold/acquire/image_problem.h"

#include <algorithm>
#include <cmath>

#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/core/rng.h"

namespace recofold {

std::string_view to_string(PixelPattern p) {
  switch (p) {
    case PixelPattern::kRandom: return "random";
    case PixelPattern::kBlocks: return "blocks";
    case PixelPattern::kFile: return "file";
  }
  return "random";
}

std::optional<PixelPattern> parse_pixel_pattern(std::string_view text) {
  if (text == "random") return PixelPattern::kRandom;
  if (text == "blocks") return PixelPattern::kBlocks;
  return std::nullopt;
}

std::vector<FieldError> ImageProblemOptions::validate(Modality modality, const Shape& image_shape) const {
  std::vector<FieldError> e;
  const std::string prefix = std::string(to_string(modality)) + ".";
  if (!(std::isfinite(noise_sigma) && noise_sigma >= 0.0))
    e.push_back({prefix + "noise_sigma", format_number(noise_sigma), "must be finite and >= 0"});
  if (modality != Modality::kInpaint) return e;
  if (pattern == PixelPattern::kFile) {
    if (pixel_mask.shape != image_shape) {
      e.push_back({"inpaint.pixel_mask", pixel_mask.shape.to_string(),
                   "must have the image shape " + image_shape.to_string()});
      return e;
    }
    Index kept = 0;
    for (uint8_t v : pixel_mask.data) {
      if (v > 1) {
        e.push_back({"inpaint.pixel_mask", std::to_string(v), "must hold only 0 and 1"});
        return e;
      }
      kept += v;
    }
    if (kept == 0) e.push_back({"inpaint.pixel_mask", "", "must keep at least one pixel (value 1)"});
    return e;
  }
  if (!(keep > 0.0 && keep <= 1.0)) e.push_back({"inpaint.keep", format_number(keep), "must be in (0, 1]"});
  if (pattern == PixelPattern::kBlocks && block_size < 1)
    e.push_back({"inpaint.block_size", std::to_string(block_size), "must be >= 1"});
  return e;
}

namespace {

NdArray<uint8_t> draw_pixel_mask(const ImageProblemOptions& o, Index ny, Index nx) {
  if (o.pattern == PixelPattern::kFile) return o.pixel_mask;
  Rng rng = Rng::for_stream(o.pattern_seed.value_or(o.seed), 1);
  const Index n = ny * nx;
  if (o.pattern == PixelPattern::kRandom) {
    NdArray<uint8_t> m(Shape{ny, nx}, 0);
    for (Index p = 0; p < n; ++p) m.data[static_cast<size_t>(p)] = rng.uniform() < o.keep ? 1 : 0;
    if (std::find(m.data.begin(), m.data.end(), uint8_t{1}) == m.data.end())
      m.data[static_cast<size_t>(rng.below(static_cast<uint64_t>(n)))] = 1;
    return m;
  }
  // Blocks: remove random blocks until at most `keep` of the pixels remain.
  NdArray<uint8_t> m(Shape{ny, nx}, 1);
  const Index target = std::max<Index>(1, static_cast<Index>(std::ceil(o.keep * static_cast<double>(n))));
  Index kept = n;
  const Index b = o.block_size;
  for (int guard = 0; kept > target && guard < 1000000; ++guard) {
    const Index y0 = static_cast<Index>(rng.below(static_cast<uint64_t>(ny)));
    const Index x0 = static_cast<Index>(rng.below(static_cast<uint64_t>(nx)));
    for (Index y = y0; y < std::min(ny, y0 + b) && kept > target; ++y)
      for (Index x = x0; x < std::min(nx, x0 + b) && kept > target; ++x) {
        uint8_t& v = m.data[static_cast<size_t>(y * nx + x)];
        kept -= v;
        v = 0;
      }
  }
  return m;
}

}  // namespace

Measurement simulate_image_problem(Modality modality, const ImageC& object, double pixel_spacing_mm,
                                   const ImageProblemOptions& options) {
  if (modality != Modality::kDenoise && modality != Modality::kInpaint)
    throw InputError("", "modality", "'" + std::string(to_string(modality)) + "' is not an image problem (denoise, inpaint)");
  const Index ny = object.rows(), nx = object.cols(), n = ny * nx;
  throw_if_invalid(options.validate(modality, Shape{ny, nx}));
  ImageProblemData d;
  d.noise_sigma = options.noise_sigma;
  if (modality == Modality::kDenoise) {
    d.pixel_mask = NdArray<uint8_t>(Shape{ny, nx}, 1);
    d.pattern = "all";
  } else {
    d.pixel_mask = draw_pixel_mask(options, ny, nx);
    d.pattern = std::string(to_string(options.pattern));
  }
  Rng noise = Rng::for_stream(options.seed, 0);
  d.observed = NdArray<float>(Shape{ny, nx}, 0.0f);
  Index kept = 0;
  for (Index p = 0; p < n; ++p) {
    if (!d.pixel_mask.data[static_cast<size_t>(p)]) continue;
    ++kept;
    const double v = object.data()[p].real() + (options.noise_sigma > 0.0 ? options.noise_sigma * noise.normal() : 0.0);
    d.observed.data[static_cast<size_t>(p)] = static_cast<float>(v);
  }
  d.kept_fraction = static_cast<double>(kept) / static_cast<double>(n);
  Measurement m;
  m.modality = modality;
  m.ny = ny;
  m.nx = nx;
  m.pixel_spacing_mm[0] = m.pixel_spacing_mm[1] = pixel_spacing_mm;
  m.image = std::move(d);
  NdArray<cfloat> truth(Shape{ny, nx});
  for (Index p = 0; p < n; ++p) truth.data[static_cast<size_t>(p)] = cfloat(object.data()[p].real(), 0.0f);
  m.truth = std::move(truth);
  m.truth_is_complex = false;
  m.truth_kind = "discrete";
  return m;
}

}  // namespace recofold
