// SPDX-License-Identifier: Apache-2.0
// Image-domain problems: denoising (y = x + n) and inpainting (y = M x + n) of an object raster.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/field_error.h"
#include "recofold/core/measurement.h"
#include "recofold/core/types.h"

namespace recofold {

// Which pixels an inpainting measurement keeps.
enum class PixelPattern {
  kRandom,  // "random": each pixel kept independently with probability `keep`
  kBlocks,  // "blocks": square blocks of block_size pixels removed at random until
            //           about 1 - keep of the pixels are gone (blocks may overlap)
  kFile,    // "file": the given pixel mask
};
std::string_view to_string(PixelPattern p);
std::optional<PixelPattern> parse_pixel_pattern(std::string_view text);  // random | blocks (file: by giving a mask)

struct ImageProblemOptions {
  // Noise std per observed pixel, in the object's intensity units, >= 0.
  double noise_sigma = 0.0;
  // inpaint: the fraction of pixels kept, in (0, 1] (random, blocks).
  double keep = 0.5;
  PixelPattern pattern = PixelPattern::kRandom;
  int block_size = 8;  // blocks: side in pixels, >= 1
  // kFile: the pixel mask [ny, nx], 0/1, at least one pixel kept.
  NdArray<uint8_t> pixel_mask;
  uint64_t seed = 0;  // noise draws (Rng::for_stream(seed, 0)); the pattern too unless pattern_seed is set
  // Pattern draws (Rng::for_stream(pattern_seed, 1)); unset: `seed`. A study sets it apart from
  // the noise seed so that noise levels share the pixels. For a fixed pattern seed, patterns
  // nest: a larger keep keeps every pixel a smaller one keeps (the same draws, stopped earlier).
  std::optional<uint64_t> pattern_seed;

  // Every violation by field path for `modality` on a grid of `image_shape`:
  // "denoise.noise_sigma" / "inpaint.noise_sigma", "inpaint.keep",
  // "inpaint.block_size", "inpaint.pixel_mask" (shape, values, nothing kept).
  std::vector<FieldError> validate(Modality modality, const Shape& image_shape) const;
};

// The measurement of the real part of `object` [ny, nx] (the truth, kind
// "discrete": these problems observe the pixels themselves):
//   denoise  y = x + n, every pixel observed;
//   inpaint  y = M x + n on the kept pixels, 0 elsewhere.
// `pixel_spacing_mm` is copied to the record. Throws InvalidFields (field
// paths above) for invalid options and InputError("modality") for mri or ct.
Measurement simulate_image_problem(Modality modality, const ImageC& object, double pixel_spacing_mm,
                                   const ImageProblemOptions& options);

}  // namespace recofold
