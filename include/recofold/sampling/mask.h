// SPDX-License-Identifier: Apache-2.0
// Cartesian k-space sampling masks: line patterns, 2-D variable density, Poisson-disc, rasterised radial and golden-angle spokes.
#pragma once

#include <cstdint>
#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/config.h"
#include "recofold/core/types.h"

namespace recofold {

// Conventions: a mask is uint8 [ny, nx] in centred k-space order (DC at row
// ny/2, column nx/2, the layout of /mri/mask), 1 = sampled. Rows are phase
// encodes (ky), columns the readout (kx): line patterns sample whole rows.
// Acceleration R = ny·nx / (number of sampled points).
enum class MaskPattern {
  kLinesUniform,  // "lines-uniform": equispaced rows + fully sampled centre rows (parallel imaging)
  kLinesVd,       // "lines-vd": random rows, variable density in |ky|, fully sampled centre (Lustig 2007)
  kPointsVd,      // "points-vd": random points, variable density in |k|, fully sampled centre block (ky-kz planes)
  kPoissonDisc,   // "poisson-disc": variable-density Poisson-disc (Bridson 2007), fully sampled centre block
  kRadial,        // "radial": spokes through the centre, equally spaced over 180°, rasterised
  kRadialGolden,  // "radial-golden": spokes at successive golden-angle increments (Winkelmann 2007), rasterised
};

std::string_view to_string(MaskPattern p);
std::optional<MaskPattern> parse_mask_pattern(std::string_view text);
// "lines-uniform, lines-vd, points-vd, poisson-disc, radial, radial-golden"
std::string accepted_mask_patterns();

// Sampling density of the random patterns as a function of the normalised
// distance from the k-space centre, κ in [0, 1] (1 at the edge of the ky axis
// for lines; at the corners for 2-D patterns, using elliptical coordinates
// κ = sqrt((ky/(ny/2))² + (kx/(nx/2))²)/√2 so non-square grids scale alike).
enum class DensityProfile {
  kPolynomial,  // "polynomial": (1 - κ)^power
  kGaussian,    // "gaussian": exp(-κ² / (2 sigma²))
};
std::string_view to_string(DensityProfile d);
std::optional<DensityProfile> parse_density_profile(std::string_view text);

// The golden angle between successive full-diameter spokes, 180° (√5 − 1)/2
// ≈ 111.246° (Winkelmann et al., IEEE TMI 26, 2007), in radians.
double golden_angle_rad();

struct MaskOptions {
  MaskPattern pattern = MaskPattern::kLinesVd;
  Index ny = 256, nx = 256;       // grid (>= 2 each)
  // Requested acceleration R = ny nx / samples, in [1, 64]. Every pattern
  // hits round(ny nx / R) samples exactly (lines: round(ny / R) rows), so the
  // achieved R is within 1% whenever the sample (line) count is >= 50; it is
  // always reported. Ignored for radial patterns when `spokes` > 0.
  double acceleration = 4.0;
  // Fully sampled centre: fraction of the rows (line patterns) or of each
  // axis (points-vd, poisson-disc: a centred block), in [0, 1). Not used by
  // radial patterns (their centre is dense by construction).
  double center_fraction = 0.08;
  uint64_t seed = 0;                // every random choice comes from this seed
  DensityProfile density = DensityProfile::kPolynomial;  // lines-vd, points-vd
  double density_power = 2.0;       // polynomial power p >= 0 (0 = uniform random)
  double density_sigma = 0.35;      // gaussian sigma in units of κ, > 0
  // Poisson-disc: the disc radius grows linearly from r0 at the centre to
  // r0 (1 + radius_growth) at κ = 1; r0 is found by bisection to hit R.
  double radius_growth = 2.0;       // >= 0 (0 = uniform Poisson-disc)
  // Radial: number of spokes. 0 (default) = as many as R needs; the last
  // spoke is then shortened symmetrically (outer ends first) so the sample
  // count is exact. > 0 = exactly this many full spokes (R is a result).
  int spokes = 0;

  // Every violation as "field = value; rule"; empty means valid.
  std::vector<std::string> validate() const;
};

struct SamplingMask {
  NdArray<uint8_t> mask;                 // [ny, nx]
  std::string pattern;                   // to_string(pattern), or "file"
  double requested_acceleration = 0.0;   // as asked (0 when the pattern fixes it, e.g. a spoke count)
  double achieved_acceleration = 0.0;    // ny nx / samples
  Index samples = 0;
  Index center_rows = 0, center_cols = 0;  // fully sampled centre block made by the pattern
  uint64_t seed = 0;
  std::vector<double> spoke_angles_rad;  // radial patterns: spoke angles in acquisition order, [0, 2π)
  std::map<std::string, double> numbers;  // pattern details (e.g. poisson_radius_px, last_spoke_fraction)
};

// Builds a mask. Invalid options, or options that cannot reach R (a centre
// larger than the sample budget, a radial R below what full spokes can
// cover), throw InputError naming the field by its path ("mask.accel",
// "mask.center", ...: the names of MaskOptions::validate with "mask." in front).
SamplingMask make_mask(const MaskOptions& options);

// Wraps an existing 0/1 array as a SamplingMask (pattern "file"); values
// other than 0 count as sampled. InputError(file, field, ...) if it is empty,
// not 2-D or samples nothing.
SamplingMask mask_from_values(const NdArray<float>& values, const std::string& file, const std::string& field);

// Reads a sampling spec (sampling-masks/*.toml):
//   pattern = "lines-vd"       size = [ny, nx] (or one integer)   accel = 4.0
//   center = 0.08   seed = 1   density = "polynomial"|"gaussian"   power = 2.0
//   sigma = 0.35    radius_growth = 2.0    spokes = 32    description = "..."
//   kind = "mri-mask" (optional; tells these specs from the CT view sets in the same folder)
// Unknown keys and bad values throw InputError with file, line and key.
MaskOptions mask_options_from_config(const Config& cfg);

}  // namespace recofold
