// SPDX-License-Identifier: Apache-2.0
// Phantom TOML tables and the numeric component table of phantom files.
#include "recofold/phantom/phantom_table.h"

#include <algorithm>
#include <cmath>
#include <map>
#include <sstream>

#include "recofold/core/config.h"
#include "recofold/core/number_format.h"
#include "recofold/core/error.h"

namespace recofold {

namespace {
constexpr double kPi = 3.14159265358979323846;

const std::vector<std::string> kTopKeys = {"name", "description", "fov_mm", "phase0_deg",
                                           "phase_gx", "phase_gy", "ellipse", "blob"};
const std::vector<std::string> kComponentKeys = {"intensity", "a", "b", "x0", "y0", "phi_deg"};
const std::vector<std::string> kColumns = {"object", "type", "intensity_re", "intensity_im", "a",
                                           "b",      "x0",   "y0",           "phi_deg"};
constexpr const char* kTypeLegend = "0 = ellipse (a, b semi-axes), 1 = blob (a, b standard deviations)";

double finite_double(const Config& cfg, const std::string& key, double fallback, bool required) {
  if (!cfg.has(key)) {
    if (required) throw cfg.error(key, "missing; required in every component");
    return fallback;
  }
  const double v = cfg.get_double(key);
  if (!std::isfinite(v)) throw cfg.error(key, "= " + format_sig(v, 6) + "; must be a finite number");
  return v;
}

cdouble read_intensity(const Config& cfg) {
  const std::string key = "intensity";
  if (!cfg.has(key))
    throw cfg.error(key, "missing; every component needs an intensity (a number, or [re, im])");
  cdouble value;
  try {
    value = cdouble(cfg.get_double(key), 0.0);
  } catch (const InputError&) {
    std::vector<double> pair;
    try {
      pair = cfg.get_double_list(key);
    } catch (const InputError&) {
      throw cfg.error(key, "must be a number, or an array [re, im] of two numbers");
    }
    if (pair.size() != 2)
      throw cfg.error(key, "has " + std::to_string(pair.size()) + " entries; a complex intensity is [re, im]");
    value = cdouble(pair[0], pair[1]);
  }
  if (!std::isfinite(value.real()) || !std::isfinite(value.imag()))
    throw cfg.error(key, "must be finite");
  return value;
}

Component read_component(const Config& cfg, ComponentKind kind) {
  cfg.expect_only(kComponentKeys);
  Component c;
  c.kind = kind;
  c.intensity = read_intensity(cfg);
  for (const char* axis : {"a", "b"}) {
    const double v = finite_double(cfg, axis, 0.0, true);
    if (!(v > 0.0))
      throw cfg.error(axis, "= " + format_sig(v, 6) + "; must be > 0 (" +
                                (kind == ComponentKind::kEllipse ? "a semi-axis" : "a standard deviation") + ")");
    (axis[0] == 'a' ? c.a : c.b) = v;
  }
  c.x0 = finite_double(cfg, "x0", 0.0, false);
  c.y0 = finite_double(cfg, "y0", 0.0, false);
  c.phi_deg = finite_double(cfg, "phi_deg", 0.0, false);
  return c;
}

std::string file_stem(const std::string& path) {
  const size_t slash = path.find_last_of('/');
  std::string base = slash == std::string::npos ? path : path.substr(slash + 1);
  const size_t dot = base.find_last_of('.');
  return dot == std::string::npos || dot == 0 ? base : base.substr(0, dot);
}

Phantom phantom_from_config(const Config& cfg) {
  for (const std::string& key : cfg.keys()) {
    if (std::find(kTopKeys.begin(), kTopKeys.end(), key) != kTopKeys.end()) continue;
    bool is_tables = false;
    try {
      is_tables = !cfg.tables(key).empty();
    } catch (const InputError&) {
      is_tables = false;
    }
    if (is_tables)
      throw cfg.error(key, "unknown component type [[" + key + "]]; known types: [[ellipse]], [[blob]]");
    cfg.expect_only(kTopKeys);  // throws for this key, listing the allowed ones
  }
  Phantom p;
  p.name = cfg.get_string_or("name", file_stem(cfg.file()));
  p.description = cfg.get_string_or("description", "");
  p.fov_mm = finite_double(cfg, "fov_mm", 256.0, false);
  if (!(p.fov_mm > 0.0)) throw cfg.error("fov_mm", "= " + format_sig(p.fov_mm, 6) + "; must be > 0");
  p.phase0_rad = finite_double(cfg, "phase0_deg", 0.0, false) * kPi / 180.0;
  p.phase_gx = finite_double(cfg, "phase_gx", 0.0, false);
  p.phase_gy = finite_double(cfg, "phase_gy", 0.0, false);

  // Components in file order (ellipses and blobs may interleave).
  std::vector<std::pair<int, Component>> ordered;
  for (const Config& e : cfg.tables("ellipse")) ordered.emplace_back(e.line(), read_component(e, ComponentKind::kEllipse));
  for (const Config& b : cfg.tables("blob")) ordered.emplace_back(b.line(), read_component(b, ComponentKind::kGaussian));
  std::stable_sort(ordered.begin(), ordered.end(),
                   [](const auto& l, const auto& r) { return l.first < r.first; });
  for (auto& [line, c] : ordered) p.components.push_back(c);
  if (p.components.empty())
    throw InputError(cfg.file(), "[[ellipse]]/[[blob]]",
                     "no components: a phantom table needs at least one [[ellipse]] or [[blob]] table",
                     std::max(1, cfg.line()));
  return p;
}

InputError table_error(const std::string& file, const std::string& reason) {
  return InputError(file, kPhantomTablePath, reason);
}
}  // namespace

Phantom load_phantom_table(const std::string& path) { return phantom_from_config(Config::load(path)); }

Phantom parse_phantom_table(const std::string& text, const std::string& name) {
  return phantom_from_config(Config::parse(text, name));
}

Table phantom_to_table(const Phantom& p) { return phantoms_to_table({p}); }

Table phantoms_to_table(const std::vector<Phantom>& objects) {
  RECOFOLD_CHECK(!objects.empty()) << "phantoms_to_table needs at least one object";
  const Phantom& first = objects.front();
  size_t rows = 0;
  for (const Phantom& o : objects) {
    RECOFOLD_CHECK(o.fov_mm == first.fov_mm && o.phase0_rad == first.phase0_rad &&
                   o.phase_gx == first.phase_gx && o.phase_gy == first.phase_gy)
        << "objects of one component table must share fov_mm and the global phase";
    rows += o.components.size();
  }
  Table t;
  t.columns = kColumns;
  t.rows = NdArray<double>(Shape{static_cast<Index>(rows), static_cast<Index>(kColumns.size())});
  size_t r = 0;
  for (size_t i = 0; i < objects.size(); ++i) {
    for (const Component& c : objects[i].components) {
      double* row = t.rows.ptr() + r * kColumns.size();
      row[0] = static_cast<double>(i);
      row[1] = c.kind == ComponentKind::kEllipse ? 0.0 : 1.0;
      row[2] = c.intensity.real();
      row[3] = c.intensity.imag();
      row[4] = c.a;
      row[5] = c.b;
      row[6] = c.x0;
      row[7] = c.y0;
      row[8] = c.phi_deg;
      ++r;
    }
  }
  t.number_attrs["fov_mm"] = first.fov_mm;
  t.number_attrs["phase0_rad"] = first.phase0_rad;
  t.number_attrs["phase_gx"] = first.phase_gx;
  t.number_attrs["phase_gy"] = first.phase_gy;
  t.number_attrs["objects"] = static_cast<double>(objects.size());
  t.text_attrs["name"] = first.name;
  t.text_attrs["description"] = first.description;
  t.text_attrs["types"] = kTypeLegend;
  return t;
}

std::vector<Phantom> phantoms_from_table(const Table& table, const std::string& file) {
  std::map<std::string, size_t> col;
  for (size_t i = 0; i < table.columns.size(); ++i) col[table.columns[i]] = i;
  for (const std::string& c : kColumns)
    if (!col.count(c)) throw table_error(file, "missing column '" + c + "'");
  const Shape& s = table.rows.shape;
  if (s.rank() != 2 || s[1] != static_cast<Index>(table.columns.size()))
    throw table_error(file, "shape " + s.to_string() + " does not match " + std::to_string(table.columns.size()) +
                                " columns");
  if (s[0] == 0) throw table_error(file, "no components");

  auto attr = [&](const char* key, double fallback) {
    auto it = table.number_attrs.find(key);
    const double v = it == table.number_attrs.end() ? fallback : it->second;
    if (!std::isfinite(v)) throw table_error(file, std::string("attribute ") + key + " is not finite");
    return v;
  };
  Phantom base;
  base.fov_mm = attr("fov_mm", 256.0);
  if (!(base.fov_mm > 0.0)) throw table_error(file, "attribute fov_mm = " + format_sig(base.fov_mm, 6) + "; must be > 0");
  base.phase0_rad = attr("phase0_rad", 0.0);
  base.phase_gx = attr("phase_gx", 0.0);
  base.phase_gy = attr("phase_gy", 0.0);
  if (auto it = table.text_attrs.find("name"); it != table.text_attrs.end()) base.name = it->second;
  if (auto it = table.text_attrs.find("description"); it != table.text_attrs.end()) base.description = it->second;

  std::vector<Phantom> objects;
  const size_t ncol = table.columns.size();
  for (Index r = 0; r < s[0]; ++r) {
    const double* row = table.rows.ptr() + static_cast<size_t>(r) * ncol;
    auto v = [&](const char* name) { return row[col[name]]; };
    const std::string where = "row " + std::to_string(r) + ": ";
    for (const std::string& c : kColumns)
      if (!std::isfinite(row[col[c]])) throw table_error(file, where + c + " is not finite");
    const double obj = v("object");
    // Every object has at least one row, so an index cannot reach the row count.
    if (obj < 0 || obj != std::floor(obj) || obj >= static_cast<double>(s[0]))
      throw table_error(file, where + "object = " + format_sig(obj, 6) + "; must be an integer in 0.." +
                                  std::to_string(s[0] - 1) + " (objects are numbered from 0 without gaps)");
    const double type = v("type");
    if (type != 0.0 && type != 1.0) throw table_error(file, where + "type = " + format_sig(type, 6) + "; must be 0 (ellipse) or 1 (blob)");
    Component c;
    c.kind = type == 0.0 ? ComponentKind::kEllipse : ComponentKind::kGaussian;
    c.intensity = cdouble(v("intensity_re"), v("intensity_im"));
    c.a = v("a");
    c.b = v("b");
    if (!(c.a > 0.0) || !(c.b > 0.0))
      throw table_error(file, where + "a = " + format_sig(c.a, 6) + ", b = " + format_sig(c.b, 6) + "; both must be > 0");
    c.x0 = v("x0");
    c.y0 = v("y0");
    c.phi_deg = v("phi_deg");
    const size_t index = static_cast<size_t>(obj);
    if (objects.size() <= index) objects.resize(index + 1, base);
    objects[index].components.push_back(c);
  }
  for (size_t i = 0; i < objects.size(); ++i)
    if (objects[i].components.empty()) throw table_error(file, "object " + std::to_string(i) + " has no components");
  return objects;
}

Phantom phantom_from_table(const Table& table, const std::string& file, int object) {
  std::vector<Phantom> all = phantoms_from_table(table, file);
  if (object < 0 || static_cast<size_t>(object) >= all.size())
    throw table_error(file, "object " + std::to_string(object) + " requested; the table holds " +
                                std::to_string(all.size()));
  return all[static_cast<size_t>(object)];
}

}  // namespace recofold
