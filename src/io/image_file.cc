// SPDX-License-Identifier: Apache-2.0
// The image file (layout in include/recofold/io/image_file.h) and the shared /provenance group.
#include "recofold/io/image_file.h"

#include <cmath>
#include <set>

#include "h5_provenance.h"
#include "recofold/core/checks.h"
#include "recofold/core/error.h"
#include "recofold/io/h5_file.h"

namespace recofold {

namespace internal {

void write_provenance_group(H5Writer& w, const Provenance& prov) {
  w.write_attr("/provenance", "producer", prov.producer);
  w.write_attr("/provenance", "command", prov.command);
  w.write_attr("/provenance", "created_utc", prov.created_utc);
  for (const auto& [k, v] : prov.extra) w.write_attr("/provenance", k, v);
}

Provenance read_provenance_group(const H5Reader& r) {
  Provenance p;
  p.producer.clear();
  p.created_utc.clear();
  if (!r.has("/provenance")) return p;
  for (const auto& name : r.attr_names("/provenance")) {
    const std::string v = r.attr_as_text("/provenance", name);
    if (name == "producer")
      p.producer = v;
    else if (name == "command")
      p.command = v;
    else if (name == "created_utc")
      p.created_utc = v;
    else
      p.extra[name] = v;
  }
  return p;
}

void write_attr_maps(H5Writer& w, const std::string& object, const std::map<std::string, double>& numbers,
                     const std::map<std::string, std::string>& texts) {
  for (const auto& [k, v] : numbers) w.write_attr(object, k, v);
  for (const auto& [k, v] : texts) w.write_attr(object, k, v);
}

}  // namespace internal

namespace {

const std::set<std::string> kStandardImageAttrs = {"pixel_spacing_mm", "description", "research_use_only",
                                                   "producer"};

std::string join_columns(const std::vector<std::string>& cols) {
  std::string s;
  for (size_t i = 0; i < cols.size(); ++i) s += (i ? "," : "") + cols[i];
  return s;
}

std::vector<std::string> split_columns(const std::string& s) {
  std::vector<std::string> out;
  size_t start = 0;
  while (start <= s.size()) {
    const auto comma = s.find(',', start);
    const auto end = comma == std::string::npos ? s.size() : comma;
    if (end > start) out.push_back(s.substr(start, end - start));
    if (comma == std::string::npos) break;
    start = comma + 1;
  }
  return out;
}

// True (and the value in `v`) for an attribute holding exactly one number.
bool number_attr(const H5Reader& r, const std::string& object, const std::string& name, double& v) {
  try {
    const auto all = r.attr_doubles(object, name);
    if (all.size() != 1) return false;
    v = all[0];
    return true;
  } catch (const InputError&) {
    return false;
  }
}

bool is_text_attr(const H5Reader& r, const std::string& object, const std::string& name) {
  try {
    r.attr_string(object, name);
    return true;
  } catch (const InputError&) {
    return false;
  }
}

// Reads every dataset carrying a `columns` attribute as a Table (recursively).
void collect_tables(const H5Reader& r, const std::string& group, std::map<std::string, Table>& out) {
  for (const auto& child : r.children(group)) {
    const std::string path = (group == "/" ? "" : group) + "/" + child;
    if (path == "/image" || path == "/provenance") continue;
    if (r.is_group(path)) {
      collect_tables(r, path, out);
      continue;
    }
    if (!r.has_attr(path, "columns")) continue;
    Table t;
    t.rows = r.read_double(path);
    if (t.rows.shape.rank() != 2) throw InputError(r.file(), path, "table has shape " + t.rows.shape.to_string() +
                                                                       ", expected [rows, columns]");
    t.columns = split_columns(r.attr_string(path, "columns"));
    if (static_cast<Index>(t.columns.size()) != t.rows.shape[1])
      throw InputError(r.file(), path, "attribute columns names " + std::to_string(t.columns.size()) +
                                           " columns, the table has " + std::to_string(t.rows.shape[1]));
    for (const auto& name : r.attr_names(path)) {
      if (name == "columns") continue;
      if (is_text_attr(r, path, name))
        t.text_attrs[name] = r.attr_string(path, name);
      else if (double v; number_attr(r, path, name, v))
        t.number_attrs[name] = v;
    }
    out[path] = std::move(t);
  }
}

}  // namespace

void write_image_file(const std::string& path, const ImageRecord& rec, const Provenance& prov) {
  const Shape& s = rec.pixels.shape;
  if (s.rank() < 2 || s.rank() > 3 || s.size() == 0 || rec.pixels.size() != s.size())
    throw WorkError("cannot write " + path + ": image shape " + s.to_string() +
                    " is not [ny, nx] or [count, ny, nx] with data");
  H5Writer w(path);
  if (rec.is_complex) {
    w.write("/image", rec.pixels);
  } else {
    NdArray<float> re(s);
    for (Index i = 0; i < s.size(); ++i) re.data[static_cast<size_t>(i)] = rec.pixels.data[static_cast<size_t>(i)].real();
    w.write("/image", re);
  }
  w.write_attr("/image", "pixel_spacing_mm", std::vector<double>{rec.pixel_spacing_mm[0], rec.pixel_spacing_mm[1]});
  w.write_attr("/image", "description", rec.description);
  w.write_attr("/image", "research_use_only", int64_t{1});
  w.write_attr("/image", "producer", producer_string());
  internal::write_attr_maps(w, "/image", rec.number_attrs, rec.text_attrs);
  for (const auto& [tpath, table] : rec.tables) {
    w.write(tpath, table.rows);
    w.write_attr(tpath, "columns", join_columns(table.columns));
    internal::write_attr_maps(w, tpath, table.number_attrs, table.text_attrs);
  }
  internal::write_provenance_group(w, prov);
  w.commit();
}

ImageRecord read_image_file(const std::string& path) {
  H5Reader r(path);
  if (!r.has("/image"))
    throw InputError(path, "/image", "dataset is missing (an image file holds /image [ny, nx] or [count, ny, nx])");
  ImageRecord rec;
  const Shape s = r.shape("/image");
  require_rank(s, 2, 3, path, "/image");
  if (s.size() == 0) throw InputError(path, "/image", "is empty (shape " + s.to_string() + ")");
  rec.is_complex = r.is_complex("/image");
  rec.pixels = r.read_complex("/image");
  require_finite(rec.pixels.ptr(), rec.pixels.size(), path, "/image");
  if (r.has_attr("/image", "pixel_spacing_mm")) {
    const auto sp = r.attr_doubles("/image", "pixel_spacing_mm");
    if (sp.size() != 2 || !(sp[0] > 0) || !(sp[1] > 0) || !std::isfinite(sp[0]) || !std::isfinite(sp[1]))
      throw InputError(path, "/image", "attribute pixel_spacing_mm must be two positive numbers (dy, dx)");
    rec.pixel_spacing_mm[0] = sp[0];
    rec.pixel_spacing_mm[1] = sp[1];
  }
  if (r.has_attr("/image", "description") && is_text_attr(r, "/image", "description"))
    rec.description = r.attr_string("/image", "description");
  for (const auto& name : r.attr_names("/image")) {
    if (kStandardImageAttrs.count(name)) continue;
    if (is_text_attr(r, "/image", name))
      rec.text_attrs[name] = r.attr_string("/image", name);
    else if (double v; number_attr(r, "/image", name, v))
      rec.number_attrs[name] = v;
  }
  collect_tables(r, "/", rec.tables);
  return rec;
}

Provenance read_provenance(const std::string& path) {
  H5Reader r(path);
  return internal::read_provenance_group(r);
}

}  // namespace recofold
