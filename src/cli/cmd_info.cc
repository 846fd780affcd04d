// SPDX-License-Identifier: Apache-2.0
// `recofold info FILE`: datasets, shapes, types, attributes and provenance of a file.
#include <sys/stat.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <memory>
#include <sstream>
#include <string>
#include <vector>

#include "cli_common.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/io/h5_file.h"
#include "recofold/io/image_export.h"
#include "recofold/io/trajectory_file.h"

namespace recofold::cli {

namespace {

std::string one_line(std::string s, size_t max_len = 160) {
  std::replace(s.begin(), s.end(), '\n', ' ');
  if (s.size() > max_len) s = s.substr(0, max_len - 3) + "...";
  return s;
}

// Whole attribute text, continuation lines indented under the first.
std::string whole(const std::string& s, const std::string& indent) {
  std::string out;
  for (char c : s) out += c == '\n' ? "\n" + indent + "  " : std::string(1, c);
  return out;
}

// `full`: attributes whole (--full); otherwise on one line, cut at 160 characters.
void print_attrs(const H5Reader& r, const std::string& object, const std::string& indent, std::ostream& out,
                 bool full) {
  for (const auto& name : r.attr_names(object)) {
    const std::string text = r.attr_as_text(object, name);
    out << indent << "@" << name << " = " << (full ? whole(text, indent) : one_line(text)) << "\n";
  }
}

std::string value_range(const H5Reader& r, const std::string& path) {
  // Only for small, real/complex numeric datasets (a few million values at most).
  const std::string type = r.type_name(path);
  if (r.shape(path).size() == 0 || r.shape(path).size() > (1 << 24)) return "";
  double lo = 0, hi = 0;
  std::string what = "range";
  if (r.is_complex(path)) {
    const auto a = r.read_complex(path);
    lo = hi = std::abs(a.data[0]);
    for (const auto& z : a.data) lo = std::min(lo, static_cast<double>(std::abs(z))), hi = std::max(hi, static_cast<double>(std::abs(z)));
    what = "|z| range";
  } else if (type.rfind("float", 0) == 0 || type.rfind("int", 0) == 0 || type.rfind("uint", 0) == 0) {
    const auto a = r.read_double(path);
    lo = hi = a.data[0];
    for (double v : a.data) lo = std::min(lo, v), hi = std::max(hi, v);
  } else {
    return "";
  }
  char buf[96];
  std::snprintf(buf, sizeof buf, "  %s [%.6g, %.6g]", what.c_str(), lo, hi);
  return buf;
}

// Column names of a 2-D real table with a matching `columns` attribute
// ("iteration,objective,..."), empty otherwise.
std::vector<std::string> table_columns(const H5Reader& r, const std::string& path) {
  const Shape shape = r.shape(path);
  if (shape.rank() != 2 || r.is_complex(path) || !r.has_attr(path, "columns")) return {};
  std::vector<std::string> names;
  std::stringstream list(r.attr_string(path, "columns"));
  for (std::string name; std::getline(list, name, ',');) names.push_back(name);
  if (static_cast<Index>(names.size()) != shape[1]) return {};
  return names;
}

// A table dataset as rows under its named columns: the first and last five
// rows (all of them with --full), each column as wide as its name.
void print_table(const H5Reader& r, const std::string& path, const std::vector<std::string>& names,
                 std::ostream& out, bool full) {
  const NdArray<double> a = r.read_double(path);
  const Index rows = a.shape[0], cols = a.shape[1];
  std::vector<size_t> width(names.size());
  for (size_t c = 0; c < names.size(); ++c) width[c] = std::max<size_t>(names[c].size(), 11);
  const auto row_text = [&](auto cell) {
    std::string line = "    ";
    for (Index c = 0; c < cols; ++c) {
      const std::string v = cell(c);
      line += std::string(width[static_cast<size_t>(c)] - std::min(v.size(), width[static_cast<size_t>(c)]), ' ') + v;
      line += c + 1 < cols ? "  " : "";
    }
    return line;
  };
  out << row_text([&](Index c) { return names[static_cast<size_t>(c)]; }) << "\n";
  const Index head = 5;
  for (Index i = 0; i < rows; ++i) {
    if (!full && rows > 2 * head && i == head) {
      out << "    ... " << rows - 2 * head << " more rows (--full prints all)\n";
      i = rows - head - 1;
      continue;
    }
    out << row_text([&](Index c) { return format_sig(a.data[static_cast<size_t>(i * cols + c)], 6); }) << "\n";
  }
}

void walk(const H5Reader& r, const std::string& group, std::ostream& out, bool full) {
  for (const auto& child : r.children(group)) {
    const std::string path = (group == "/" ? "" : group) + "/" + child;
    if (r.is_group(path)) {
      out << path << "/  (group)\n";
      print_attrs(r, path, "    ", out, full);
      walk(r, path, out, full);
    } else if (r.has(path)) {
      std::string desc;
      std::vector<std::string> columns;
      try {
        columns = table_columns(r, path);
        desc = r.type_name(path) + " " + r.shape(path).to_string() +
               (columns.empty() ? value_range(r, path) : "  table, " + std::to_string(columns.size()) + " columns");
      } catch (const InputError&) {
        desc = "(not a dataset)";
      }
      out << path << "  " << desc << "\n";
      try {
        print_attrs(r, path, "    ", out, full);
        if (!columns.empty()) print_table(r, path, columns, out, full);
      } catch (const InputError&) {
      }
    }
  }
}

// One line of facts about an embedded trajectory (a trajectory file or a non-Cartesian measurement).
void trajectory_facts(const H5Reader& r, const std::string& group, std::ostream& out) {
  if (!r.has(group) || !r.is_group(group) || !r.has(group + "/k")) return;
  try {
    const Trajectory t = read_trajectory_group(r, group, 0, 0);
    double kmax = 0.0;
    for (Index j = 0; j < t.points(); ++j) kmax = std::max(kmax, std::hypot(t.kx[j], t.ky[j]));
    char buf[320];
    std::snprintf(buf, sizeof buf,
                  "trajectory (%s): %s on %lldx%lld, %lld readouts x %lld samples = %lld points, |k| <= %.4g cycles "
                  "per FOV, dcf %s, Cartesian-equivalent R %.3f",
                  group.c_str(), std::string(to_string(t.kind)).c_str(), static_cast<long long>(t.ny),
                  static_cast<long long>(t.nx), static_cast<long long>(t.readouts),
                  static_cast<long long>(t.samples_per_readout), static_cast<long long>(t.points()), kmax,
                  t.dcf.empty() ? "absent" : t.dcf_method.c_str(),
                  static_cast<double>(t.ny * t.nx) / static_cast<double>(t.points()));
    out << buf << "\n";
  } catch (const InputError& e) {
    out << "trajectory (" << group << "): not valid: " << one_line(e.what()) << "\n";
  }
}

void info_hdf5(const std::string& path, std::ostream& out, bool full) {
  H5Reader r(path);
  out << path << ": HDF5 file\n";
  out << "/  (root)\n";
  print_attrs(r, "/", "    ", out, full);
  walk(r, "/", out, full);
  trajectory_facts(r, "/trajectory", out);
  trajectory_facts(r, "/mri/trajectory", out);
}

void info_itk(const std::string& path, std::ostream& out) {
  const ImageRecord rec = import_image(path);
  const Shape& s = rec.pixels.shape;
  double lo = rec.pixels.data[0].real(), hi = lo;
  for (const auto& z : rec.pixels.data) lo = std::min(lo, static_cast<double>(z.real())), hi = std::max(hi, static_cast<double>(z.real()));
  char buf[256];
  std::snprintf(buf, sizeof buf, "%s: %s image, shape %s (rows, columns%s), pixel spacing (dy, dx) = (%.6g, %.6g) mm, "
                "values [%.6g, %.6g]",
                path.c_str(), file_extension(path).c_str(), s.to_string().c_str(), s.rank() == 3 ? "; stack first" : "",
                rec.pixel_spacing_mm[0], rec.pixel_spacing_mm[1], lo, hi);
  out << buf << "\n";
}

void run_info(const std::string& path, bool full, const Context& ctx) {
  struct stat st;
  if (::stat(path.c_str(), &st) != 0) throw InputError(path, "", "file not found");
  const std::string ext = file_extension(path);
  std::ostringstream out;
  if (ext == ".h5" || ext == ".hdf5" || !is_image_extension(ext))
    info_hdf5(path, out, full);  // not-HDF5 files are reported by the reader
  else
    info_itk(path, out);
  std::string text = out.str();
  if (!text.empty() && text.back() == '\n') text.pop_back();
  say(ctx, text);
}

}  // namespace

void register_cmd_info(CLI::App& app, Context& ctx) {
  auto path = std::make_shared<std::string>();
  CLI::App* sub = app.add_subcommand(
      "info", "Show datasets, shapes, types, attributes and provenance of a file (.h5, or an image via ITK)");
  sub->add_option("FILE", *path, "Any recofold HDF5 file (image, measurement, model, ...) or .nii.gz/.nii/.mha/.nrrd/.png")
      ->required();
  auto full = std::make_shared<bool>(false);
  sub->add_flag("--full", *full, "Print attributes whole (config texts, provenance) instead of cut to one line");
  sub->footer(kResearchUseLine);
  sub->callback([path, full, &ctx] { run_info(*path, *full, ctx); });
}

}  // namespace recofold::cli
