// SPDX-License-Identifier: Apache-2.0
// The trajectory file (layout in include/recofold/io/trajectory_file.h): writer, validating reader, text points.
#include "recofold/io/trajectory_file.h"

#include <algorithm>
#include <cmath>
#include <fstream>
#include <set>
#include <sstream>

#include "h5_provenance.h"
#include "recofold/core/checks.h"
#include "recofold/core/error.h"

namespace recofold {

namespace {

const std::set<std::string> kKnownAttrs = {"kind",   "image_shape",         "units", "fov_mm", "readouts",
                                           "samples_per_readout", "dcf_method", "research_use_only"};

NdArray<double> to_nd(const std::vector<double>& v) {
  NdArray<double> a(Shape{static_cast<Index>(v.size())});
  a.data = v;
  return a;
}

std::string fmt(double v) {
  std::ostringstream s;
  s << v;
  return s.str();
}

}  // namespace

void write_trajectory_group(H5Writer& w, const std::string& g, const Trajectory& t) {
  const Index m = t.points();
  NdArray<float> k(Shape{m, 2});
  for (Index j = 0; j < m; ++j) {
    k.data[static_cast<size_t>(2 * j)] = static_cast<float>(t.kx[j]);
    k.data[static_cast<size_t>(2 * j + 1)] = static_cast<float>(t.ky[j]);
  }
  w.write(g + "/k", k);
  if (!t.dcf.empty()) {
    NdArray<float> d(Shape{static_cast<Index>(t.dcf.size())});
    d.data = t.dcf;
    w.write(g + "/dcf", d);
  }
  w.write_attr(g, "kind", std::string(to_string(t.kind)));
  w.write_attr(g, "image_shape", std::vector<int64_t>{static_cast<int64_t>(t.ny), static_cast<int64_t>(t.nx)});
  w.write_attr(g, "units", std::string("cycles per FOV"));
  w.write_attr(g, "fov_mm", t.fov_mm);
  w.write_attr(g, "readouts", static_cast<int64_t>(t.readouts));
  w.write_attr(g, "samples_per_readout", static_cast<int64_t>(t.samples_per_readout));
  w.write_attr(g, "dcf_method", t.dcf_method);
  w.write_attr(g, "research_use_only", int64_t{1});
  internal::write_attr_maps(w, g, t.numbers, t.texts);
  if (!t.readout_angles_rad.empty()) w.write(g + "/readout_angles_rad", to_nd(t.readout_angles_rad));
  if (!t.positions.empty()) w.write(g + "/positions", to_nd(t.positions));
  if (t.gradient_mT_per_m.size() > 0) w.write(g + "/gradient_mT_per_m", t.gradient_mT_per_m);
  if (!t.sample_time_us.empty()) w.write(g + "/sample_time_us", to_nd(t.sample_time_us));
}

void write_trajectory_file(const std::string& path, const Trajectory& t, const Provenance& prov) {
  H5Writer w(path);
  write_trajectory_group(w, "/trajectory", t);
  internal::write_provenance_group(w, prov);
  w.commit();
}

namespace {

// The grid from attribute image_shape (or the caller's ny, nx), checked against each other.
void read_grid(const H5Reader& r, const std::string& g, Index ny, Index nx, Trajectory& t) {
  const std::string& file = r.file();
  if (r.has_attr(g, "image_shape")) {
    const auto s = r.attr_doubles(g, "image_shape");
    if (s.size() != 2 || !(s[0] >= 2) || !(s[1] >= 2) || std::floor(s[0]) != s[0] || std::floor(s[1]) != s[1])
      throw InputError(file, g, "attribute 'image_shape' must be two integers >= 2 [ny, nx]");
    const Index fy = static_cast<Index>(s[0]), fx = static_cast<Index>(s[1]);
    if ((ny > 0 && ny != fy) || (nx > 0 && nx != fx))
      throw InputError(file, g, "attribute 'image_shape' is [" + std::to_string(fy) + ", " + std::to_string(fx) +
                                    "] but the grid asked for is [" + std::to_string(ny) + ", " + std::to_string(nx) + "]");
    ny = fy;
    nx = fx;
  }
  if (ny < 2 || nx < 2)
    throw InputError(file, g, "attribute 'image_shape' is missing; give the image size the trajectory is for");
  t.ny = ny;
  t.nx = nx;
}

// /k: [M, 2] finite points inside the grid's band (±0.5 cycles per pixel).
void read_points(const H5Reader& r, const std::string& kpath, Trajectory& t) {
  const std::string& file = r.file();
  const Shape ks = r.shape(kpath);
  if (ks.rank() != 2 || ks[1] != 2 || ks[0] < 1)
    throw InputError(file, kpath, "shape " + ks.to_string() + ", expected [M, 2] with M >= 1 (kx, ky per row)");
  if (r.is_complex(kpath)) throw InputError(file, kpath, "is complex, expected float32 [M, 2]");
  const NdArray<float> k = r.read_float(kpath);
  require_finite(k.ptr(), k.size(), file, kpath);
  const Index m = ks[0], ny = t.ny, nx = t.nx;
  t.kx.resize(m);
  t.ky.resize(m);
  const double lx = 0.5 * static_cast<double>(nx) * (1.0 + 1e-6), ly = 0.5 * static_cast<double>(ny) * (1.0 + 1e-6);
  for (Index j = 0; j < m; ++j) {
    const double x = k.data[static_cast<size_t>(2 * j)], y = k.data[static_cast<size_t>(2 * j + 1)];
    if (std::abs(x) > lx || std::abs(y) > ly)
      throw InputError(file, kpath,
                       "point " + std::to_string(j) + " (" + fmt(x) + ", " + fmt(y) + ") cycles per FOV is outside ±" +
                           fmt(0.5 * nx) + " x ±" + fmt(0.5 * ny) + " (±0.5 cycles per pixel of the " +
                           std::to_string(ny) + "x" + std::to_string(nx) + " grid)");
    // float32 rounding at the band edge stays inside it
    t.kx[j] = std::clamp(x, -0.5 * nx, 0.5 * nx);
    t.ky[j] = std::clamp(y, -0.5 * ny, 0.5 * ny);
  }
}

// /dcf: one finite weight >= 0 per point (optional).
void read_weights(const H5Reader& r, const std::string& g, const std::string& kpath, Trajectory& t) {
  const std::string& file = r.file();
  const std::string dpath = g + "/dcf";
  if (!r.has(dpath)) return;
  const Index m = t.points();
  const Shape ds = r.shape(dpath);
  if (ds.rank() != 1 || ds[0] != m)
    throw InputError(file, dpath, "shape " + ds.to_string() + ", expected [" + std::to_string(m) + "] (one weight per point of " + kpath + ")");
  const NdArray<float> d = r.read_float(dpath);
  require_finite(d.ptr(), d.size(), file, dpath);
  for (Index j = 0; j < m; ++j)
    if (d.data[static_cast<size_t>(j)] < 0.0f)
      throw InputError(file, dpath, "value " + std::to_string(j) + " = " + fmt(d.data[static_cast<size_t>(j)]) + "; weights must be >= 0");
  t.dcf = d.data;
}

// kind, units, fov_mm, readouts x samples_per_readout, dcf_method.
void read_design_attributes(const H5Reader& r, const std::string& g, Trajectory& t) {
  const std::string& file = r.file();
  const Index m = t.points();
  if (r.has_attr(g, "kind")) {
    const std::string kind = r.attr_string(g, "kind");
    const auto parsed = parse_trajectory_kind(kind);
    if (!parsed) throw InputError(file, g, "attribute 'kind' = '" + kind + "'; expected radial, radial-golden, spiral or file");
    t.kind = *parsed;
  }
  if (r.has_attr(g, "units")) {
    const std::string u = r.attr_string(g, "units");
    if (u != "cycles per FOV") throw InputError(file, g, "attribute 'units' = '" + u + "'; only 'cycles per FOV' is understood");
  }
  if (r.has_attr(g, "fov_mm")) {
    t.fov_mm = r.attr_double(g, "fov_mm");
    if (!(t.fov_mm > 0) || !std::isfinite(t.fov_mm)) throw InputError(file, g, "attribute 'fov_mm' must be > 0");
  }
  t.readouts = 1;
  t.samples_per_readout = m;
  if (r.has_attr(g, "readouts") || r.has_attr(g, "samples_per_readout")) {
    const double ro = r.has_attr(g, "readouts") ? r.attr_double(g, "readouts") : 1.0;
    const double sp = r.has_attr(g, "samples_per_readout") ? r.attr_double(g, "samples_per_readout") : double(m);
    if (!(ro >= 1) || !(sp >= 1) || std::floor(ro) != ro || std::floor(sp) != sp || ro * sp != static_cast<double>(m))
      throw InputError(file, g, "attributes readouts = " + fmt(ro) + " and samples_per_readout = " + fmt(sp) +
                                    " must be positive integers whose product is the " + std::to_string(m) + " points");
    t.readouts = static_cast<Index>(ro);
    t.samples_per_readout = static_cast<Index>(sp);
  }
  t.dcf_method = t.dcf.empty() ? "" : (r.has_attr(g, "dcf_method") ? r.attr_string(g, "dcf_method") : "file");
}

// Spoke angles, readout positions, sample times, the gradient waveform (each optional but checked).
void read_design_arrays(const H5Reader& r, const std::string& g, Trajectory& t) {
  const std::string& file = r.file();
  auto read_vec = [&](const std::string& name, Index expected) {
    std::vector<double> out;
    const std::string p = g + "/" + name;
    if (!r.has(p)) return out;
    const NdArray<double> a = r.read_double(p);
    if (a.shape.rank() != 1 || (expected > 0 && a.size() != expected))
      throw InputError(file, p, "shape " + a.shape.to_string() + ", expected [" + std::to_string(expected) + "]");
    require_finite(a.ptr(), a.size(), file, p);
    return a.data;
  };
  t.readout_angles_rad = read_vec("readout_angles_rad", t.readouts);
  t.positions = read_vec("positions", t.samples_per_readout);
  t.sample_time_us = read_vec("sample_time_us", t.samples_per_readout);
  if (r.has(g + "/gradient_mT_per_m")) {
    t.gradient_mT_per_m = r.read_float(g + "/gradient_mT_per_m");
    if (t.gradient_mT_per_m.shape.rank() != 2 || t.gradient_mT_per_m.shape[1] != 2)
      throw InputError(file, g + "/gradient_mT_per_m", "shape " + t.gradient_mT_per_m.shape.to_string() + ", expected [G, 2]");
    require_finite(t.gradient_mT_per_m.ptr(), t.gradient_mT_per_m.size(), file, g + "/gradient_mT_per_m");
  }
  if ((t.kind == TrajectoryKind::kRadial || t.kind == TrajectoryKind::kRadialGolden) && t.readout_angles_rad.empty())
    throw InputError(file, g + "/readout_angles_rad", "is missing (a radial trajectory lists its spoke angles)");
}

// Every other attribute of the group, kept as text or a number.
void read_other_attributes(const H5Reader& r, const std::string& g, Trajectory& t) {
  for (const auto& name : r.attr_names(g)) {
    if (kKnownAttrs.count(name)) continue;
    try {
      t.texts[name] = r.attr_string(g, name);
      continue;
    } catch (const InputError&) {
    }
    try {
      const auto v = r.attr_doubles(g, name);
      if (v.size() == 1) t.numbers[name] = v[0];
    } catch (const InputError&) {
    }
  }
}

}  // namespace

Trajectory read_trajectory_group(const H5Reader& r, const std::string& g, Index ny, Index nx) {
  const std::string kpath = g + "/k";
  if (!r.has(kpath) || r.is_group(kpath))
    throw InputError(r.file(), kpath, "dataset is missing (expected float32 [M, 2] k-space points in cycles per FOV)");
  Trajectory t;
  read_grid(r, g, ny, nx, t);
  read_points(r, kpath, t);
  read_weights(r, g, kpath, t);
  read_design_attributes(r, g, t);
  read_design_arrays(r, g, t);
  read_other_attributes(r, g, t);
  return t;
}

Trajectory read_trajectory_file(const std::string& path, Index ny, Index nx) {
  H5Reader r(path);
  return read_trajectory_group(r, "/trajectory", ny, nx);
}

TextPoints read_trajectory_text(const std::string& path) {
  std::ifstream in(path);
  if (!in) throw InputError(path, "", "cannot open the file");
  TextPoints out;
  std::vector<double> kx, ky;
  std::string line;
  int number = 0, columns = 0;
  while (std::getline(in, line)) {
    ++number;
    const auto hash = line.find('#');
    if (hash != std::string::npos) line.resize(hash);
    for (char& ch : line)
      if (ch == ',' || ch == '\t' || ch == ';') ch = ' ';
    std::istringstream s(line);
    std::vector<double> v;
    std::string tok;
    while (s >> tok) {
      try {
        size_t used = 0;
        const double d = std::stod(tok, &used);
        if (used != tok.size()) throw std::invalid_argument(tok);
        v.push_back(d);
      } catch (const std::exception&) {
        throw InputError(path, "line " + std::to_string(number), "'" + tok + "' is not a number", number);
      }
    }
    if (v.empty()) continue;
    if (v.size() != 2 && v.size() != 3)
      throw InputError(path, "line " + std::to_string(number),
                       "has " + std::to_string(v.size()) + " values; expected 'kx ky' or 'kx ky dcf'", number);
    if (columns == 0) columns = static_cast<int>(v.size());
    if (static_cast<int>(v.size()) != columns)
      throw InputError(path, "line " + std::to_string(number),
                       "has " + std::to_string(v.size()) + " values but the first point line has " + std::to_string(columns), number);
    for (double d : v)
      if (!std::isfinite(d)) throw InputError(path, "line " + std::to_string(number), "value is not finite", number);
    kx.push_back(v[0]);
    ky.push_back(v[1]);
    if (columns == 3) out.dcf.push_back(static_cast<float>(v[2]));
  }
  if (kx.empty()) throw InputError(path, "", "no points (expected lines 'kx ky' or 'kx ky dcf')");
  out.kx = Eigen::Map<VecD>(kx.data(), static_cast<Index>(kx.size()));
  out.ky = Eigen::Map<VecD>(ky.data(), static_cast<Index>(ky.size()));
  return out;
}

}  // namespace recofold
