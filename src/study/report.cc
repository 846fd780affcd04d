// SPDX-License-Identifier: Apache-2.0
// report.html of a study: research-use line, provenance, tables, SVG plots, PNG montages, config.
#include "recofold/study/report.h"

#include <sys/stat.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <map>
#include <set>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/provenance.h"
#include "recofold/io/image_export.h"
#include "recofold/io/image_file.h"
#include "recofold/study/learned_models.h"
#include "study_util.h"
#include "png_plot.h"
#include "svg_plot.h"

namespace recofold {

std::string study_image_path(const std::string& dir, const std::string& key) {
  return dir + "/images/" + fnv1a_hex(key) + ".h5";
}

namespace {

const char* kStyle = R"(body{font-family:sans-serif;max-width:1150px;margin:24px auto;padding:0 16px;color:#222}
.ruo{background:#fff4d6;border:1px solid #e0b84c;padding:8px 12px;font-weight:bold}
table{border-collapse:collapse;margin:8px 0 16px 0}td,th{border:1px solid #ccc;padding:4px 8px;font-size:13px;text-align:left}
th{background:#f2f2f2}td.in{background:#e8f4ea}td.fail{background:#fbe3e3}
figure{display:inline-block;margin:8px 12px 16px 0;vertical-align:top}figcaption{font-size:12px;color:#444;max-width:900px}
pre{background:#f7f7f7;padding:8px;font-size:12px;overflow-x:auto}img.montage{image-rendering:pixelated}
)";

const std::vector<std::string>& modality_axes(const std::string& modality) {
  static const std::vector<std::string> mri = {"accel", "noise", "coils"}, ct = {"views", "photons", "arc"};
  return modality == "mri" ? mri : ct;
}

std::string axis_label(const std::string& axis) {
  if (axis == "accel") return "acceleration R";
  if (axis == "noise") return "noise sigma (per real/imaginary part)";
  if (axis == "coils") return "receive coils";
  if (axis == "views") return "views";
  if (axis == "photons") return "photons per ray";
  if (axis == "arc") return "arc (degrees)";
  return axis;
}

std::string metric_label(const std::string& m) {
  if (m == "psnr") return "PSNR (dB)";
  if (m == "ssim") return "SSIM";
  if (m == "nrmse") return "NRMSE";
  return "HFEN";
}

size_t metric_index(const std::string& m) {
  const auto& names = study_metric_names();
  return size_t(std::find(names.begin(), names.end(), m) - names.begin());
}

struct Lookup {
  std::map<std::string, const SummaryRow*> rows;
  static std::string id(const std::string& modality, const std::string& method, const std::vector<std::string>& axes) {
    std::string s = modality + "|" + method;
    for (const auto& a : axes) s += "|" + a;
    return s;
  }
  const SummaryRow* find(const Acquisition& a, const std::string& method) const {
    std::vector<std::string> axes;
    for (const auto& n : acquisition_axes()) axes.push_back(axis_value(a, n));
    const auto it = rows.find(id(std::string(to_string(a.modality)), method, axes));
    return it == rows.end() ? nullptr : it->second;
  }
};

ImageF read_image(const std::string& path) {
  const ImageRecord r = read_image_file(path);
  const Index ny = r.pixels.shape[r.pixels.shape.rank() - 2], nx = r.pixels.shape[r.pixels.shape.rank() - 1];
  ImageF img(ny, nx);
  for (Index k = 0; k < ny * nx; ++k) img.data()[k] = r.pixels.data[size_t(k)].real();
  return img;
}

std::string embed_png(const std::string& path, const std::string& alt, const std::string& cls) {
  return "<img class=\"" + cls + "\" alt=\"" + html_escape(alt) + "\" src=\"data:image/png;base64," +
         base64(read_text_file(path)) + "\"/>";
}

}  // namespace

std::string write_study_report(const ReportInputs& in) {
  const StudyConfig& c = *in.config;
  const CaseGrid& grid = *in.grid;
  const ResultsTable& results = *in.results;
  const std::string fig_dir = in.dir + "/figures";
  ::mkdir(fig_dir.c_str(), 0777);

  Lookup lookup;
  for (const SummaryRow& r : *in.summary) lookup.rows[Lookup::id(r.modality, r.method, r.axes)] = &r;
  std::map<std::string, size_t> row_of_case;
  for (size_t r = 0; r < results.rows.size(); ++r) row_of_case[results.cell(r, "case")] = r;
  int failed = 0;
  for (size_t r = 0; r < results.rows.size(); ++r) failed += results.cell(r, "error").empty() ? 0 : 1;

  std::string h = "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>recofold study: " +
                  html_escape(c.name) + "</title>\n<style>" + kStyle + "</style>\n</head>\n<body>\n";
  h += "<p class=\"ruo\">" + html_escape(kResearchUseLine) + "</p>\n";
  h += "<h1>recofold study: " + html_escape(c.name) + "</h1>\n";
  if (!c.description.empty()) h += "<p>" + html_escape(c.description) + "</p>\n";
  h += "<table>\n<tr><th>producer</th><td>" + html_escape(producer_string()) + "</td></tr>\n";
  h += "<tr><th>created (UTC)</th><td>" + Provenance::utc_timestamp() + "</td></tr>\n";
  h += "<tr><th>config</th><td>" + html_escape(c.file) + " (hash " + c.hash + ")</td></tr>\n";
  h += "<tr><th>grid</th><td>" + std::to_string(c.phantoms.size()) + " phantoms &times; " +
       std::to_string(grid.acquisitions.size()) + " acquisitions &times; " + std::to_string(c.methods.size()) +
       " methods &times; " + std::to_string(c.repetitions) + " repetitions = " + std::to_string(grid.cases.size()) +
       " cases (" + std::to_string(results.rows.size()) + " rows, " + std::to_string(failed) + " failed)</td></tr>\n";
  h += "<tr><th>image grid</th><td>" + std::to_string(c.ny) + " &times; " + std::to_string(c.nx) + "</td></tr>\n";
  std::string ph;
  for (const auto& p : c.phantoms) ph += (ph.empty() ? "" : ", ") + p.label;
  h += "<tr><th>phantoms</th><td>" + html_escape(ph) + "</td></tr>\n";
  if (c.region_radius > 0)
    h += "<tr><th>metric region</th><td>centred disc, radius " + format_number(c.region_radius) +
         " of the half-width</td></tr>\n";
  h += "<tr><th>files</th><td>results.csv (one row per case), summary.csv (mean &plusmn; std), figures/ (SVG plots, "
       "PNG montages), images/ (montage reconstructions)</td></tr>\n</table>\n";
  for (const StudyMethod& m : c.methods)
    if (m.learned() && in.learned != nullptr) {
      const std::string json = in.learned->trained_on_json(m.name);
      h += "<p>Learned method <b>" + html_escape(m.name) + "</b>: model " +
           html_escape(in.learned->model_path(m.name)) + "; trained on " + html_escape(json.empty() ? "(not recorded)" : json) +
           ". Rows inside these conditions are shaded green in the tables and ringed in the plots.</p>\n";
    }
  if (!c.notes.empty()) {
    h += "<ul>\n";
    for (const auto& n : c.notes) h += "<li>" + html_escape(n) + "</li>\n";
    h += "</ul>\n";
  }

  int figure = 0;
  for (const std::string modality : {"mri", "ct"}) {
    std::vector<const Acquisition*> acqs;
    for (const Acquisition& a : grid.acquisitions)
      if (to_string(a.modality) == modality) acqs.push_back(&a);
    std::vector<const StudyMethod*> methods;
    for (const StudyMethod& m : c.methods)
      if (m.applies_to(*parse_modality(modality))) methods.push_back(&m);
    if (acqs.empty() || methods.empty()) continue;
    h += std::string("<h2>") + (modality == "mri" ? "MRI" : "CT") + " protocols</h2>\n";

    // Table of methods x conditions.
    h += "<table>\n<tr><th>condition</th>";
    for (const StudyMethod* m : methods) h += "<th>" + html_escape(m->name) + "</th>";
    h += "</tr>\n";
    for (const Acquisition* a : acqs) {
      std::string cond;
      for (const auto& ax : acquisition_axes())
        if (!axis_value(*a, ax).empty()) cond += (cond.empty() ? "" : ", ") + ax + " " + axis_value(*a, ax);
      h += "<tr><td>" + html_escape(cond) + "</td>";
      for (const StudyMethod* m : methods) {
        const SummaryRow* r = lookup.find(*a, m->name);
        if (r == nullptr) {
          h += "<td>&ndash;</td>";
          continue;
        }
        std::string cls = r->failed > 0 ? " class=\"fail\"" : (r->in_training == "yes" ? " class=\"in\"" : "");
        h += "<td" + cls + ">";
        for (const auto& metric : c.metrics) {
          const size_t k = metric_index(metric);
          h += metric + " " + format_sig(r->mean[k], metric == "psnr" ? 4 : 3) + " &plusmn; " +
               format_sig(r->std_dev[k], 2) + "<br>";
        }
        h += "n " + std::to_string(r->n) + (r->failed ? ", failed " + std::to_string(r->failed) : "") + "</td>";
      }
      h += "</tr>\n";
    }
    h += "</table>\n";
    for (size_t r = 0; r < results.rows.size(); ++r)
      if (results.cell(r, "modality") == modality && !results.cell(r, "error").empty()) {
        h += "<p>Failed case " + html_escape(results.cell(r, "case")) + ": " + html_escape(results.cell(r, "error")) +
             "</p>\n";
      }

    // Reference acquisition: one inside a learned method's training conditions, else the first.
    const Acquisition* ref = acqs.front();
    for (const Acquisition* a : acqs) {
      bool inside = false;
      for (const StudyMethod* m : methods) {
        const SummaryRow* r = lookup.find(*a, m->name);
        inside = inside || (r != nullptr && r->in_training == "yes");
      }
      if (inside) {
        ref = a;
        break;
      }
    }
    // Plots against each axis with more than one value.
    for (const std::string& axis : modality_axes(modality)) {
      std::vector<const Acquisition*> line;
      for (const Acquisition* a : acqs) {
        bool same = true;
        for (const auto& other : acquisition_axes())
          if (other != axis && axis_value(*a, other) != axis_value(*ref, other)) same = false;
        if (same) line.push_back(a);
      }
      if (line.size() < 2) continue;
      std::sort(line.begin(), line.end(), [&](const Acquisition* x, const Acquisition* y) {
        return std::strtod(axis_value(*x, axis).c_str(), nullptr) < std::strtod(axis_value(*y, axis).c_str(), nullptr);
      });
      std::string fixed;
      for (const auto& other : acquisition_axes())
        if (other != axis && !axis_value(*ref, other).empty())
          fixed += (fixed.empty() ? "" : ", ") + other + " " + axis_value(*ref, other);
      for (const std::string metric : {"psnr", "ssim"}) {
        LinePlot plot;
        plot.title = metric_label(metric) + " vs " + axis_label(axis);
        plot.x_label = axis_label(axis);
        plot.y_label = metric_label(metric);
        for (const StudyMethod* m : methods) {
          PlotSeries s;
          s.name = m->name;
          s.dashed = m->learned();
          for (const Acquisition* a : line) {
            const SummaryRow* r = lookup.find(*a, m->name);
            s.x.push_back(std::strtod(axis_value(*a, axis).c_str(), nullptr));
            s.y.push_back(r ? r->mean[metric_index(metric)] : std::nan(""));
            s.marked.push_back(r != nullptr && r->in_training == "yes");
          }
          plot.series.push_back(std::move(s));
        }
        const std::string svg = svg_line_plot(plot);
        const std::string name = modality + "-" + metric + "-vs-" + axis + ".svg";
        write_text_atomic(fig_dir + "/" + name, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n" + svg);
        const std::string png = name.substr(0, name.size() - 4) + ".png";
        write_png_plot(fig_dir + "/" + png, plot);
        std::string legend;
        for (size_t k = 0; k < methods.size(); ++k)
          legend += (k ? ", " : "") + std::to_string(k + 1) + " " + methods[k]->name;
        ++figure;
        h += "<figure>" + svg + "<figcaption>Figure " + std::to_string(figure) + ": " + html_escape(plot.title) +
             "; mean over phantoms and repetitions; other axes: " + html_escape(fixed) + " (figures/" + name +
             "; PNG copy figures/" + png + " with numbered legend: " + html_escape(legend) +
             ").</figcaption></figure>\n";
      }
    }

    // Montages: first phantom, first repetition, per condition.
    h += "<h3>Montages (" + html_escape(c.phantoms.front().label) + ", repetition 0)</h3>\n";
    int mi = 0;
    for (const Acquisition* a : acqs) {
      const std::string mkey = c.phantoms.front().label + "|" + a->key() + "|r0";
      const std::string truth_path = study_image_path(in.dir, "truth|" + mkey);
      if (!file_exists(truth_path)) continue;
      const ImageF truth = read_image(truth_path);
      const double lo = truth.minCoeff(), hi = truth.maxCoeff();
      const double range = hi > lo ? hi - lo : 1.0;
      const double err_hi = 0.25 * range;
      const Index ny = truth.rows(), nx = truth.cols();
      const Index up = std::max<Index>(1, std::min<Index>(4, 160 / std::max(ny, nx)));
      const Index th = ny * up, tw = nx * up, gap = 4;
      const Index cols = Index(methods.size()) + 1;
      ImageF mont = ImageF::Ones(2 * th + gap, cols * tw + (cols - 1) * gap);
      auto put = [&](const ImageF& img, Index row, Index col, bool error) {
        for (Index y = 0; y < th; ++y)
          for (Index x = 0; x < tw; ++x) {
            double v = img(y / up, x / up);
            v = error ? std::fabs(v - truth(y / up, x / up)) / err_hi : (v - lo) / range;
            mont(row * (th + gap) + y, col * (tw + gap) + x) = float(std::clamp(v, 0.0, 1.0));
          }
      };
      put(truth, 0, 0, false);
      put(truth, 1, 0, true);  // zero error: a black reference tile
      std::string caption = "columns: truth";
      for (size_t k = 0; k < methods.size(); ++k) {
        const std::string key = c.phantoms.front().label + "|" + a->key() + "|" + methods[k]->name + "|r0";
        const std::string path = study_image_path(in.dir, key);
        caption += ", " + methods[k]->name;
        const auto it = row_of_case.find(key);
        if (file_exists(path) && it != row_of_case.end() && results.cell(it->second, "error").empty()) {
          const ImageF img = read_image(path);
          put(img, 0, Index(k) + 1, false);
          put(img, 1, Index(k) + 1, true);
          caption += " (PSNR " + format_sig(std::strtod(results.cell(it->second, "psnr").c_str(), nullptr), 4) +
                     " dB, SSIM " + format_sig(std::strtod(results.cell(it->second, "ssim").c_str(), nullptr), 3) + ")";
        } else {
          caption += " (failed or missing)";
        }
      }
      const std::string name = "montage-" + modality + "-" + std::to_string(mi++) + ".png";
      PngWindow w;
      w.auto_window = false;
      w.lo = 0.0;
      w.hi = 1.0;
      write_png(fig_dir + "/" + name, mont, w);
      ++figure;
      h += "<figure>" + embed_png(fig_dir + "/" + name, "montage " + a->key(), "montage") + "<figcaption>Figure " +
           std::to_string(figure) + ": " + html_escape(a->key()) + ". Top: " + html_escape(caption) +
           "; window [" + format_sig(lo, 3) + ", " + format_sig(hi, 3) + "]. Bottom: |reconstruction - truth| at the "
           "common window [0, " + format_sig(err_hi, 3) + "] (figures/" + name + ").</figcaption></figure>\n";
    }
  }

  h += "<h2>Study config</h2>\n<pre>" + html_escape(c.text) + "</pre>\n";
  h += "<p class=\"ruo\">" + html_escape(kResearchUseLine) + "</p>\n</body>\n</html>\n";
  const std::string path = in.dir + "/report.html";
  write_text_atomic(path, h);
  return path;
}

}  // namespace recofold
