// SPDX-License-Identifier: Apache-2.0
// Random phantom families for training and studies (seeded, physically valid, machine-independent draws).
//
// Object i of a family with seed S is drawn from its own generator
// Rng::for_stream(S, i), so it does not depend on how many objects are drawn.
// The draws use only the portable Rng; placement tests (below) evaluate
// sin/cos with a margin (the gap), so a last-bit difference between C
// libraries could change a decision only for a draw within ~1e-15 of that
// margin.
//
// Physical values, by construction. Every object of every family is
// non-negative everywhere and at most value_bound() (its documented maximum):
//   - ellipses form nested, non-overlapping regions: each lies inside its
//     parent and apart from its siblings with a gap of 0.008 units (exact
//     tests, src/phantom/region_tree.h); a component's intensity is its
//     region's value minus its parent's, so the object takes exactly the
//     region values (quantised to multiples of 2^-20, so every sum is exact)
//     and 0 outside the support: never a sum of overlaps;
//   - texture blobs are positive Gaussians, so they cannot push a value
//     below its region's;
//   - the maximum is certified on the analytic description by
//     value_bounds() (phantom/bounds.h) over the field of view; a texture
//     that would exceed the bound is redrawn (exact rejection: after 3
//     rejections the redraws are scaled by 0.8 per attempt, after 12 the
//     object keeps no texture; in practice this almost never happens).
//   tests/unit/phantom_family_test.cc checks 10,000 objects per family.
//
// Intensity scale, shared by every modality (common practice):
//   MRI, denoise, inpaint: relative proton density, pure water = 1;
//   CT: linear attenuation relative to water, mu / mu_water = 1 + HU/1000,
//       with mu_water = 0.0200 /mm near 65 keV (0.019-0.020 /mm at 60-70 keV,
//       common practice, from memory), so a CT simulation with
//       mu_per_mm = 0.02 gives physical line integrals.
//
// Families:
//   ellipses  piecewise-constant objects. support: an axis-aligned ellipse,
//     semi-axes U(0.65, 0.9), centre within +-0.05 of the origin, value
//     U(intensity_min, intensity_max); then `components` ellipses with
//     semi-axes U(size_min, size_max), rotation U(0, 180) degrees and value
//     U(intensity_min, intensity_max), each placed at up to 24 random
//     centres inside the support (shrunk by 0.8 after every 8 failures,
//     dropped below size_min), nested at most 3 deep. Bound 1.
//   textured  the same regions (intensity_max 0.8 by default) plus positive
//     Gaussian texture inside the support at three scales, peak amplitudes
//     U(0.3, 1) x texture_contrast x intensity_max:
//       coarse: 6 rotated anisotropic blobs, sigma U(0.08, 0.2)
//       medium: 40 rotated anisotropic blobs, sigma U(0.025, 0.06)
//       fine:   texture_blobs round blobs, sigma U(0.006, 0.02)
//                (sigma 0.4-1.3 pixels, FWHM 1-3 pixels at 128^2: texture
//                down to a few pixels). Bound 1.
//   anatomy   our own cartoon of an axial abdominal section (anterior up,
//     the patient's right on the image's left): body outline of
//     subcutaneous fat, muscle wall, abdominal cavity; liver with 3-7
//     vessels and 0-2 low-contrast lesions, spleen, two kidneys with renal
//     pelvis, aorta and vena cava, a vertebra (cortical shell, cancellous
//     core) with its posterior arch and spinal canal, 4-9 bowel loops (fluid
//     or gas); fine parenchymal texture in liver, spleen and kidneys and
//     medium texture in the abdominal fat (positive blobs, amplitude
//     U(0.3, 1) x texture_contrast x the tissue's value). Every organ's
//     position, size and rotation are jittered; one that does not fit is
//     left out. Tissue values per contrast (phantom/family.cc, common
//     practice, from memory): mri = relative proton density (bound 1),
//     ct = mu/mu_water (bound 2, cortical bone 1.8). components, sizes and
//     intensity_min/max do not apply. Default field of view 360 mm.
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
  kAnatomy,   // "anatomy": abdominal-like section with organs, vessels, texture
};

std::string_view to_string(Family family);
// "ellipses", "textured" or "anatomy"; nullopt otherwise (callers list the accepted names).
std::optional<Family> parse_family(std::string_view text);
// "ellipses, textured, anatomy"
std::string family_names();

// Which tissue property the anatomy family's values are (header comment).
enum class TissueContrast {
  kMri,  // "mri": relative proton density (also used for denoise and inpaint)
  kCt,   // "ct": linear attenuation relative to water
};
std::string_view to_string(TissueContrast contrast);
std::optional<TissueContrast> parse_tissue_contrast(std::string_view text);  // "mri" | "ct"

// Documented maximum of the ellipses and textured families.
constexpr double kFamilyValueBound = 1.0;

struct FamilyOptions {
  Family family = Family::kTextured;
  // Random ellipses inside the support (0..1000); fewer may fit. More gives
  // busier objects. Not used by anatomy.
  int components = 10;
  // Value range of the support and of each region (0 <= min < max <= 1).
  // Not used by anatomy.
  double intensity_min = 0.1;
  double intensity_max = 0.8;
  // Semi-axes of the random ellipses, units of the square (0 < min <= max <= 0.5).
  double size_min = 0.03;
  double size_max = 0.3;
  // Multi-scale Gaussian texture (on for textured and anatomy, off for
  // ellipses by family_options()).
  bool texture = true;
  // Number of fine-scale blobs when texture is on (0..5000); anatomy scales
  // its parenchymal blob counts by texture_blobs / 300.
  int texture_blobs = 300;
  // Texture peak amplitude relative to intensity_max (textured) or to the
  // tissue's value (anatomy), 0..1.
  double texture_contrast = 0.12;
  // Field of view written into every object, mm (> 0).
  double fov_mm = 256.0;
  // Tissue values of the anatomy family.
  TissueContrast contrast = TissueContrast::kMri;

  // Every violation, e.g. "family.size_max = 0.7; must be in (0, 0.5]".
  std::vector<std::string> validate() const;
  // The documented maximum: every object lies in [0, value_bound()].
  double value_bound() const;
};

// Defaults of a family: ellipses (texture off, intensity_max 1), textured
// (texture on, intensity_max 0.8), anatomy (texture on, texture_contrast
// 0.05, fov 360 mm, the given contrast).
FamilyOptions family_options(Family family, TissueContrast contrast = TissueContrast::kMri);

// Object `index` of the family (valid options, checked).
Phantom make_family_object(const FamilyOptions& options, uint64_t seed, uint64_t index);

// Objects 0 .. count-1, in parallel with OpenMP; count >= 0.
std::vector<Phantom> make_family(const FamilyOptions& options, uint64_t seed, int count);

}  // namespace recofold
