// SPDX-License-Identifier: Apache-2.0
// Random phantom families for training and studies (seeded, machine-independent).
//
// Object i of a family with seed S is drawn from its own generator
// Rng::for_stream(S, i), so it does not depend on how many objects are drawn,
// and the same (S, i) gives the same component table on any machine: the
// draws use only the portable Rng and IEEE arithmetic (no libm calls).
//
// Layout of one object (units of the [-1,1] square):
//   support: an axis-aligned ellipse, semi-axes U(0.65, 0.9), centre within
//     +-0.05 of the origin, intensity U(intensity_min, intensity_max);
//   `components` ellipses inside the support: semi-axes U(size_min, size_max),
//     rotation U(0, 180) degrees, placed so the whole ellipse stays inside the
//     support; each has an intensity such that, over the support alone, it
//     shows U(intensity_min, intensity_max) (overlaps add);
//   with texture: Gaussian blobs inside the support at three scales, with
//     peak amplitudes of either sign, |amplitude| = U(0.3, 1) x
//     texture_contrast x intensity_max:
//       coarse: 6 rotated anisotropic blobs, sigma U(0.08, 0.2)
//       medium: 40 rotated anisotropic blobs, sigma U(0.025, 0.06)
//       fine:   texture_blobs round blobs, sigma U(0.006, 0.02)
//                (sigma 0.4-1.3 pixels, FWHM 1-3 pixels at 128^2: texture
//                down to a few pixels).
// Everything stays exact in k-space and in projection (phantom/fourier.h,
// phantom/line_integral.h).
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/phantom/phantom.h"

namespace recofold {

enum class Family {
  kEllipses,  // "ellipses": piecewise-constant objects (texture off by default)
  kTextured,  // "textured": ellipses + multi-scale Gaussian blobs (texture on)
};

std::string_view to_string(Family family);
// "ellipses" or "textured"; nullopt otherwise (callers list the accepted names).
std::optional<Family> parse_family(std::string_view text);
// "ellipses, textured"
std::string family_names();

struct FamilyOptions {
  Family family = Family::kTextured;
  // Random ellipses inside the support (0..1000). More gives busier objects.
  int components = 10;
  // Intensity range of the support and of each ellipse over it (min < max,
  // finite). Attenuation-like objects keep both positive.
  double intensity_min = 0.1;
  double intensity_max = 1.0;
  // Semi-axes of the random ellipses, units of the square (0 < min <= max <= 0.5).
  double size_min = 0.03;
  double size_max = 0.3;
  // Multi-scale Gaussian texture (on for "textured", off for "ellipses" by
  // family_options()).
  bool texture = true;
  // Number of fine-scale blobs when texture is on (0..5000).
  int texture_blobs = 300;
  // Texture peak amplitude relative to intensity_max (0..1).
  double texture_contrast = 0.12;
  // Field of view written into every object, mm (> 0).
  double fov_mm = 256.0;

  // Every violation, e.g. "family.size_max = 0.7; must be in (0, 0.5]".
  std::vector<std::string> validate() const;
};

// Defaults of a family (texture on for kTextured, off for kEllipses).
FamilyOptions family_options(Family family);

// Object `index` of the family (valid options, checked).
Phantom make_family_object(const FamilyOptions& options, uint64_t seed, uint64_t index);

// Objects 0 .. count-1, in parallel with OpenMP; count >= 0.
std::vector<Phantom> make_family(const FamilyOptions& options, uint64_t seed, int count);

}  // namespace recofold
