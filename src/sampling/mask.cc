// SPDX-License-Identifier: Apache-2.0
// Sampling mask generators: line patterns, variable-density points, Poisson-disc, radial and golden-angle spokes.
#include "recofold/sampling/mask.h"

#include <algorithm>
#include <cmath>
#include <numeric>
#include <sstream>

#include "recofold/core/error.h"
#include "recofold/core/field_error.h"
#include "recofold/core/rng.h"

namespace recofold {

namespace {

constexpr double kPi = 3.14159265358979323846;

struct PatternName {
  MaskPattern pattern;
  const char* name;
};
constexpr PatternName kPatterns[] = {
    {MaskPattern::kLinesUniform, "lines-uniform"}, {MaskPattern::kLinesVd, "lines-vd"},
    {MaskPattern::kPointsVd, "points-vd"},         {MaskPattern::kPoissonDisc, "poisson-disc"},
    {MaskPattern::kRadial, "radial"},              {MaskPattern::kRadialGolden, "radial-golden"},
};

std::string fmt(double v) {
  std::ostringstream s;
  s << v;
  return s.str();
}

Index count_ones(const NdArray<uint8_t>& m) {
  Index n = 0;
  for (uint8_t v : m.data) n += v ? 1 : 0;
  return n;
}

// Density weight at normalised distance kappa in [0, 1], floored so every
// point keeps a small chance (the sample budget can then always be met).
double density_weight(const MaskOptions& o, double kappa) {
  kappa = std::min(1.0, std::max(0.0, kappa));
  double w = o.density == DensityProfile::kPolynomial ? std::pow(1.0 - kappa, o.density_power)
                                                       : std::exp(-kappa * kappa / (2.0 * o.density_sigma * o.density_sigma));
  return std::max(w, 1e-4);
}

// Chooses `m` of the candidates without replacement, with probability growing
// with their weights (Efraimidis & Spirakis, 2006: keep the m largest keys
// log(u)/w). Ties are broken by candidate order, so the result depends on
// the seed only.
std::vector<Index> weighted_choice(const std::vector<Index>& candidates, const std::vector<double>& weights, Index m,
                                   Rng& rng) {
  RECOFOLD_CHECK(static_cast<Index>(candidates.size()) >= m);
  std::vector<std::pair<double, Index>> keys(candidates.size());
  for (size_t i = 0; i < candidates.size(); ++i) {
    double u = rng.uniform();
    if (u <= 0.0) u = 1e-300;
    keys[i] = {std::log(u) / weights[i], static_cast<Index>(i)};
  }
  auto by_key = [](const std::pair<double, Index>& a, const std::pair<double, Index>& b) {
    return a.first > b.first || (a.first == b.first && a.second < b.second);
  };
  if (m < static_cast<Index>(keys.size())) std::nth_element(keys.begin(), keys.begin() + m, keys.end(), by_key);
  std::vector<Index> out;
  out.reserve(static_cast<size_t>(m));
  for (Index i = 0; i < m; ++i) out.push_back(candidates[static_cast<size_t>(keys[static_cast<size_t>(i)].second)]);
  return out;
}

Index target_samples(Index total, double r) {
  return std::max<Index>(1, static_cast<Index>(std::llround(static_cast<double>(total) / r)));
}

void set_row(NdArray<uint8_t>& m, Index row, Index nx) {
  std::fill(m.data.begin() + row * nx, m.data.begin() + (row + 1) * nx, uint8_t{1});
}

// Centre rows [c0, c0 + count) around row ny/2.
Index centre_start(Index n, Index count) { return n / 2 - count / 2; }

void fill_lines(const MaskOptions& o, SamplingMask& out) {
  const Index ny = o.ny, nx = o.nx;
  const Index lines = target_samples(ny, o.acceleration);
  const Index nc = static_cast<Index>(std::llround(o.center_fraction * static_cast<double>(ny)));
  if (nc > lines)
    throw InputError("", "mask.center",
                     "a centre of " + std::to_string(nc) + " lines exceeds the " + std::to_string(lines) +
                         " lines that R = " + fmt(o.acceleration) + " allows at ny = " + std::to_string(ny));
  const Index c0 = centre_start(ny, nc);
  for (Index r = c0; r < c0 + nc; ++r) set_row(out.mask, r, nx);
  std::vector<Index> outer;
  for (Index r = 0; r < ny; ++r)
    if (r < c0 || r >= c0 + nc) outer.push_back(r);
  const Index m = lines - nc;
  if (m > 0) {
    if (o.pattern == MaskPattern::kLinesUniform) {
      // Equispaced over the outer rows, with the lattice phase chosen so it
      // passes through the centre row when there is no calibration block.
      const double step = static_cast<double>(outer.size()) / static_cast<double>(m);
      const double centre_pos = static_cast<double>(std::lower_bound(outer.begin(), outer.end(), ny / 2) - outer.begin());
      const double phase = std::fmod(centre_pos, step);
      for (Index j = 0; j < m; ++j) {
        Index k = static_cast<Index>(std::floor(phase + static_cast<double>(j) * step));
        k = std::min<Index>(k, static_cast<Index>(outer.size()) - 1);
        set_row(out.mask, outer[static_cast<size_t>(k)], nx);
      }
    } else {
      Rng rng(o.seed);
      std::vector<double> w(outer.size());
      for (size_t i = 0; i < outer.size(); ++i)
        w[i] = density_weight(o, std::abs(static_cast<double>(outer[i] - ny / 2)) / (static_cast<double>(ny) / 2.0));
      for (Index r : weighted_choice(outer, w, m, rng)) set_row(out.mask, r, nx);
    }
  }
  out.center_rows = nc;
  out.center_cols = nc > 0 ? nx : 0;
}

double elliptical_kappa(Index iy, Index ix, Index ny, Index nx) {
  const double u = static_cast<double>(iy - ny / 2) / (static_cast<double>(ny) / 2.0);
  const double v = static_cast<double>(ix - nx / 2) / (static_cast<double>(nx) / 2.0);
  return std::min(1.0, std::sqrt(u * u + v * v) / std::sqrt(2.0));
}

// Marks the centred calibration block; returns its size.
std::pair<Index, Index> fill_centre_block(const MaskOptions& o, NdArray<uint8_t>& m) {
  const Index by = static_cast<Index>(std::llround(o.center_fraction * static_cast<double>(o.ny)));
  const Index bx = static_cast<Index>(std::llround(o.center_fraction * static_cast<double>(o.nx)));
  const Index r0 = centre_start(o.ny, by), c0 = centre_start(o.nx, bx);
  for (Index r = r0; r < r0 + by; ++r)
    for (Index c = c0; c < c0 + bx; ++c) m.data[static_cast<size_t>(r * o.nx + c)] = 1;
  return {by, bx};
}

void fill_points(const MaskOptions& o, SamplingMask& out) {
  const Index n = target_samples(o.ny * o.nx, o.acceleration);
  const auto [by, bx] = fill_centre_block(o, out.mask);
  if (by * bx > n)
    throw InputError("", "mask.center",
                     "a centre block of " + std::to_string(by) + "x" + std::to_string(bx) + " exceeds the " +
                         std::to_string(n) + " samples that R = " + fmt(o.acceleration) + " allows");
  std::vector<Index> cand;
  std::vector<double> w;
  for (Index iy = 0; iy < o.ny; ++iy)
    for (Index ix = 0; ix < o.nx; ++ix) {
      const Index p = iy * o.nx + ix;
      if (out.mask.data[static_cast<size_t>(p)]) continue;
      cand.push_back(p);
      w.push_back(density_weight(o, elliptical_kappa(iy, ix, o.ny, o.nx)));
    }
  Rng rng(o.seed);
  for (Index p : weighted_choice(cand, w, n - by * bx, rng)) out.mask.data[static_cast<size_t>(p)] = 1;
  out.center_rows = by;
  out.center_cols = bx;
}

// One variable-density Poisson-disc pattern (Bridson 2007, k = 30) on the
// integer grid. Distances are measured with x scaled by ny/nx (elliptical
// scaling); a point at p keeps every other point at distance >= r(p), where
// r(p) = r0 (1 + growth κ(p)).
struct PoissonResult {
  NdArray<uint8_t> points;
  Index count = 0;
};

PoissonResult poisson_disc(const MaskOptions& o, double r0, const std::vector<float>& growth_factor) {
  const Index ny = o.ny, nx = o.nx;
  const double sx = static_cast<double>(ny) / static_cast<double>(nx);  // metric scale of x
  PoissonResult res;
  res.points = NdArray<uint8_t>(Shape{ny, nx}, 0);
  auto radius = [&](Index p) { return r0 * growth_factor[static_cast<size_t>(p)]; };
  const double r_max = r0 * (1.0 + o.radius_growth);
  const Index wy = static_cast<Index>(std::ceil(r_max)), wx = static_cast<Index>(std::ceil(r_max / sx));
  Rng rng(o.seed);
  std::vector<Index> active;
  auto place = [&](Index p) {
    res.points.data[static_cast<size_t>(p)] = 1;
    active.push_back(p);
    ++res.count;
  };
  auto fits = [&](Index qy, Index qx) {
    const Index q = qy * nx + qx;
    if (res.points.data[static_cast<size_t>(q)]) return false;
    const double rq = radius(q);
    for (Index y = std::max<Index>(0, qy - wy); y <= std::min(ny - 1, qy + wy); ++y)
      for (Index x = std::max<Index>(0, qx - wx); x <= std::min(nx - 1, qx + wx); ++x) {
        const Index p = y * nx + x;
        if (!res.points.data[static_cast<size_t>(p)]) continue;
        const double dy = static_cast<double>(y - qy), dx = static_cast<double>(x - qx) * sx;
        const double need = std::max(rq, radius(p));
        if (dy * dy + dx * dx < need * need) return false;
      }
    return true;
  };
  place((ny / 2) * nx + nx / 2);
  while (!active.empty()) {
    const size_t i = static_cast<size_t>(rng.below(active.size()));
    const Index p = active[i];
    const Index py = p / nx, px = p % nx;
    const double rp = radius(p);
    bool found = false;
    for (int k = 0; k < 30 && !found; ++k) {
      const double a = rng.uniform(0.0, 2.0 * kPi);
      const double rho = rng.uniform(rp, 2.0 * rp);
      const Index qy = py + static_cast<Index>(std::lround(rho * std::sin(a)));
      const Index qx = px + static_cast<Index>(std::lround(rho * std::cos(a) / sx));
      if (qy < 0 || qy >= ny || qx < 0 || qx >= nx) continue;
      if (fits(qy, qx)) {
        place(qy * nx + qx);
        found = true;
      }
    }
    if (!found) {
      active[i] = active.back();
      active.pop_back();
    }
  }
  return res;
}

void fill_poisson(const MaskOptions& o, SamplingMask& out) {
  const Index ny = o.ny, nx = o.nx;
  const Index n = target_samples(ny * nx, o.acceleration);
  NdArray<uint8_t> block(Shape{ny, nx}, 0);
  const auto [by, bx] = fill_centre_block(o, block);
  if (by * bx > n)
    throw InputError("", "mask.center",
                     "a centre block of " + std::to_string(by) + "x" + std::to_string(bx) + " exceeds the " +
                         std::to_string(n) + " samples that R = " + fmt(o.acceleration) + " allows");
  std::vector<float> growth(static_cast<size_t>(ny * nx));
  for (Index iy = 0; iy < ny; ++iy)
    for (Index ix = 0; ix < nx; ++ix)
      growth[static_cast<size_t>(iy * nx + ix)] =
          static_cast<float>(1.0 + o.radius_growth * elliptical_kappa(iy, ix, ny, nx));
  auto union_count = [&](const NdArray<uint8_t>& pts) {
    Index c = 0;
    for (size_t i = 0; i < pts.data.size(); ++i) c += (pts.data[i] | block.data[i]) ? 1 : 0;
    return c;
  };
  // Bisection on r0: the count falls as r0 grows. Keep the pattern with the
  // fewest samples that still reaches n, then drop the excess at random.
  double lo = 0.5, hi = 2.0 * std::sqrt(static_cast<double>(ny * nx) / static_cast<double>(n)) + 1.0;
  PoissonResult best;
  Index best_count = -1;
  double best_r0 = lo;
  for (int it = 0; it < 24; ++it) {
    const double mid = 0.5 * (lo + hi);
    PoissonResult r = poisson_disc(o, mid, growth);
    const Index c = union_count(r.points);
    if (c >= n) {
      if (best_count < 0 || c < best_count) {
        best = std::move(r);
        best_count = c;
        best_r0 = mid;
      }
      lo = mid;
    } else {
      hi = mid;
    }
    if (best_count >= 0 && best_count - n <= n / 500) break;
  }
  if (best_count < 0) {
    PoissonResult r = poisson_disc(o, 0.5, growth);
    const Index c = union_count(r.points);
    if (c < n)
      throw InputError("", "mask.accel",
                       "poisson-disc cannot reach R = " + fmt(o.acceleration) + " on this grid (densest pattern gives R = " +
                           fmt(static_cast<double>(ny * nx) / static_cast<double>(c)) + ")");
    best = std::move(r);
    best_count = c;
    best_r0 = 0.5;
  }
  for (size_t i = 0; i < out.mask.data.size(); ++i) out.mask.data[i] = (best.points.data[i] | block.data[i]) ? 1 : 0;
  // Remove the excess among Poisson points outside the block (removal keeps the distances).
  std::vector<Index> removable;
  for (size_t i = 0; i < out.mask.data.size(); ++i)
    if (best.points.data[i] && !block.data[i]) removable.push_back(static_cast<Index>(i));
  Rng rng(o.seed ^ 0x9e3779b97f4a7c15ULL);
  Index excess = best_count - n;
  for (Index k = 0; k < excess && !removable.empty(); ++k) {
    const size_t j = static_cast<size_t>(rng.below(removable.size()));
    out.mask.data[static_cast<size_t>(removable[j])] = 0;
    removable[j] = removable.back();
    removable.pop_back();
  }
  out.center_rows = by;
  out.center_cols = bx;
  out.numbers["poisson_radius_px"] = best_r0;
  out.numbers["poisson_radius_growth"] = o.radius_growth;
  out.numbers["poisson_removed_points"] = static_cast<double>(excess);
}

// Grid points of one spoke through the centre at angle theta (x right, y up),
// from the outer ends inwards (pairs of opposite ends alternate), no repeats.
std::vector<Index> spoke_points(double theta, Index ny, Index nx) {
  const Index steps = 2 * std::max(ny, nx);
  const double du = 1.0 / static_cast<double>(std::max(ny, nx));
  std::vector<std::pair<Index, double>> pts;  // (pixel, |u|)
  for (Index s = -steps / 2; s <= steps / 2; ++s) {
    const double u = static_cast<double>(s) * du * 2.0;  // u in [-2, 2] covers past the edge; clipped below
    if (std::abs(u) > 1.0) continue;
    const double fy = static_cast<double>(ny / 2) - u * std::sin(theta) * (static_cast<double>(ny) / 2.0);
    const double fx = static_cast<double>(nx / 2) + u * std::cos(theta) * (static_cast<double>(nx) / 2.0);
    const Index iy = static_cast<Index>(std::lround(fy)), ix = static_cast<Index>(std::lround(fx));
    if (iy < 0 || iy >= ny || ix < 0 || ix >= nx) continue;
    pts.push_back({iy * nx + ix, std::abs(u)});
  }
  std::stable_sort(pts.begin(), pts.end(), [](const auto& a, const auto& b) { return a.second > b.second; });
  std::vector<Index> out;
  for (const auto& p : pts)
    if (std::find(out.begin(), out.end(), p.first) == out.end()) out.push_back(p.first);
  return out;
}

void fill_radial(const MaskOptions& o, SamplingMask& out) {
  const Index ny = o.ny, nx = o.nx;
  const bool golden = o.pattern == MaskPattern::kRadialGolden;
  auto angles_for = [&](int spokes) {
    std::vector<double> a(static_cast<size_t>(spokes));
    for (int s = 0; s < spokes; ++s)
      a[static_cast<size_t>(s)] = golden ? std::fmod(s * golden_angle_rad(), 2.0 * kPi) : s * kPi / spokes;
    return a;
  };
  std::vector<int> coverage;
  auto rasterise = [&](const std::vector<double>& angles) {
    coverage.assign(static_cast<size_t>(ny * nx), 0);
    std::vector<std::vector<Index>> per_spoke;
    for (double a : angles) {
      per_spoke.push_back(spoke_points(a, ny, nx));
      for (Index p : per_spoke.back()) ++coverage[static_cast<size_t>(p)];
    }
    return per_spoke;
  };
  auto covered = [&]() {
    Index c = 0;
    for (int v : coverage) c += v > 0 ? 1 : 0;
    return c;
  };
  std::vector<double> angles;
  std::vector<std::vector<Index>> spokes;
  if (o.spokes > 0) {
    angles = angles_for(o.spokes);
    spokes = rasterise(angles);
  } else {
    const Index n = target_samples(ny * nx, o.acceleration);
    const int max_spokes = static_cast<int>(4 * std::max(ny, nx));
    int s = 1;
    for (; s <= max_spokes; ++s) {
      angles = angles_for(s);
      spokes = rasterise(angles);
      if (covered() >= n) break;
    }
    if (s > max_spokes)
      throw InputError("", "mask.accel",
                       "radial spokes cover at most " + std::to_string(covered()) + " of " + std::to_string(ny * nx) +
                           " points (R >= " + fmt(static_cast<double>(ny * nx) / static_cast<double>(covered())) +
                           "); R = " + fmt(o.acceleration) + " is not reachable");
    // Shorten the last spoke from its outer ends until the count is exact.
    Index excess = covered() - n;
    const auto& last = spokes.back();
    Index removed = 0;
    for (Index p : last) {
      if (excess == 0) break;
      if (coverage[static_cast<size_t>(p)] == 1) {
        coverage[static_cast<size_t>(p)] = 0;
        --excess;
        ++removed;
      }
    }
    out.numbers["last_spoke_fraction"] =
        1.0 - static_cast<double>(removed) / static_cast<double>(std::max<size_t>(1, last.size()));
  }
  for (size_t i = 0; i < coverage.size(); ++i) out.mask.data[i] = coverage[i] > 0 ? 1 : 0;
  out.spoke_angles_rad = angles;
  out.numbers["spokes"] = static_cast<double>(angles.size());
}

}  // namespace

std::string_view to_string(MaskPattern p) {
  for (const auto& e : kPatterns)
    if (e.pattern == p) return e.name;
  return "unknown";
}

std::optional<MaskPattern> parse_mask_pattern(std::string_view text) {
  for (const auto& e : kPatterns)
    if (text == e.name) return e.pattern;
  return std::nullopt;
}

std::string accepted_mask_patterns() {
  std::string s;
  for (const auto& e : kPatterns) s += (s.empty() ? "" : ", ") + std::string(e.name);
  return s;
}

std::string_view to_string(DensityProfile d) { return d == DensityProfile::kPolynomial ? "polynomial" : "gaussian"; }

std::optional<DensityProfile> parse_density_profile(std::string_view text) {
  if (text == "polynomial") return DensityProfile::kPolynomial;
  if (text == "gaussian") return DensityProfile::kGaussian;
  return std::nullopt;
}

double golden_angle_rad() { return kPi * (std::sqrt(5.0) - 1.0) / 2.0; }

std::vector<std::string> MaskOptions::validate() const {
  std::vector<std::string> e;
  if (ny < 2 || nx < 2 || ny > 65536 || nx > 65536)
    e.push_back("size = " + std::to_string(ny) + "x" + std::to_string(nx) + "; each side must be 2..65536");
  const bool radial_fixed = (pattern == MaskPattern::kRadial || pattern == MaskPattern::kRadialGolden) && spokes > 0;
  if (!radial_fixed && !(acceleration >= 1.0 && acceleration <= 64.0))
    e.push_back("accel = " + fmt(acceleration) + "; must be in [1, 64]");
  if (!(center_fraction >= 0.0 && center_fraction < 1.0))
    e.push_back("center = " + fmt(center_fraction) + "; must be in [0, 1)");
  if (!(density_power >= 0.0 && density_power <= 100.0)) e.push_back("power = " + fmt(density_power) + "; must be in [0, 100]");
  if (!(density_sigma > 0.0 && std::isfinite(density_sigma))) e.push_back("sigma = " + fmt(density_sigma) + "; must be > 0");
  if (!(radius_growth >= 0.0 && radius_growth <= 50.0))
    e.push_back("radius_growth = " + fmt(radius_growth) + "; must be in [0, 50]");
  if (spokes < 0 || spokes > 100000) e.push_back("spokes = " + std::to_string(spokes) + "; must be 0..100000");
  return e;
}

SamplingMask make_mask(const MaskOptions& o) {
  throw_if_invalid(parse_field_messages(o.validate(), "mask."));
  SamplingMask out;
  out.mask = NdArray<uint8_t>(Shape{o.ny, o.nx}, 0);
  out.pattern = std::string(to_string(o.pattern));
  out.seed = o.seed;
  out.requested_acceleration = o.acceleration;
  switch (o.pattern) {
    case MaskPattern::kLinesUniform:
    case MaskPattern::kLinesVd:
      fill_lines(o, out);
      break;
    case MaskPattern::kPointsVd:
      fill_points(o, out);
      break;
    case MaskPattern::kPoissonDisc:
      fill_poisson(o, out);
      break;
    case MaskPattern::kRadial:
    case MaskPattern::kRadialGolden:
      if (o.spokes > 0) out.requested_acceleration = 0.0;
      fill_radial(o, out);
      break;
  }
  out.samples = count_ones(out.mask);
  out.achieved_acceleration = static_cast<double>(o.ny * o.nx) / static_cast<double>(std::max<Index>(1, out.samples));
  return out;
}

SamplingMask mask_from_values(const NdArray<float>& values, const std::string& file, const std::string& field) {
  if (values.shape.rank() != 2 || values.size() == 0)
    throw InputError(file, field, "expected a 2-D mask [ny, nx], got shape " + values.shape.to_string());
  SamplingMask out;
  out.pattern = "file";
  out.mask = NdArray<uint8_t>(values.shape, 0);
  for (size_t i = 0; i < values.data.size(); ++i) {
    if (!std::isfinite(values.data[i])) throw InputError(file, field, "non-finite value at element " + std::to_string(i));
    out.mask.data[i] = values.data[i] != 0.0f ? 1 : 0;
  }
  out.samples = count_ones(out.mask);
  if (out.samples == 0) throw InputError(file, field, "the mask samples no point");
  out.achieved_acceleration = static_cast<double>(values.size()) / static_cast<double>(out.samples);
  return out;
}

MaskOptions mask_options_from_config(const Config& cfg) {
  cfg.expect_only({"pattern", "size", "accel", "center", "seed", "density", "power", "sigma", "radius_growth", "spokes",
                   "description", "name", "kind"});
  if (cfg.has("kind") && cfg.get_string("kind") != "mri-mask")
    throw cfg.error("kind", "'" + cfg.get_string("kind") + "' is not a k-space mask spec (expected kind = \"mri-mask\")");
  MaskOptions o;
  const std::string pat = cfg.get_string("pattern");
  const auto p = parse_mask_pattern(pat);
  if (!p) throw cfg.error("pattern", "unknown pattern '" + pat + "' (expected one of: " + accepted_mask_patterns() + ")");
  o.pattern = *p;
  if (cfg.has("size")) {
    std::vector<int64_t> size;
    try {
      size = cfg.get_int_list("size");
    } catch (const InputError&) {
      size = {cfg.get_int("size")};
    }
    if (size.size() == 1) size.push_back(size[0]);
    if (size.size() != 2) throw cfg.error("size", "expected [ny, nx] or one integer");
    o.ny = size[0];
    o.nx = size[1];
  }
  o.acceleration = cfg.get_double_or("accel", o.acceleration);
  o.center_fraction = cfg.get_double_or("center", o.center_fraction);
  const int64_t seed = cfg.get_int_or("seed", 0);
  if (seed < 0) throw cfg.error("seed", "must be >= 0");
  o.seed = static_cast<uint64_t>(seed);
  if (cfg.has("density")) {
    const std::string d = cfg.get_string("density");
    const auto dp = parse_density_profile(d);
    if (!dp) throw cfg.error("density", "unknown density '" + d + "' (expected polynomial or gaussian)");
    o.density = *dp;
  }
  o.density_power = cfg.get_double_or("power", o.density_power);
  o.density_sigma = cfg.get_double_or("sigma", o.density_sigma);
  o.radius_growth = cfg.get_double_or("radius_growth", o.radius_growth);
  o.spokes = static_cast<int>(cfg.get_int_or("spokes", 0));
  // Report the first invalid field with its line.
  const auto errors = o.validate();
  if (!errors.empty()) {
    const std::string& first = errors.front();
    std::string key = first.substr(0, first.find(' '));
    if (key == "size") key = "size";
    throw cfg.error(cfg.has(key) ? key : "pattern", first);
  }
  return o;
}

}  // namespace recofold
