// SPDX-License-Identifier: Apache-2.0
// report.html of a study: research-use line, provenance, tables, SVG plots, PNG montages, config.
#include "recofold/study/report.h"

#include <sys/stat.h>

#include <algorithm>
#include <array>
#include <cctype>
#include <cmath>
#include <cstdlib>
#include <limits>
#include <map>
#include <cstdio>
#include <set>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/provenance.h"
#include "recofold/io/image_export.h"
#include "recofold/io/image_file.h"
#include "recofold/study/comparisons.h"
#include "recofold/study/learned_models.h"
#include "recofold/study/statistics.h"
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
section#findings{border:2px solid #4c7be0;background:#f4f7ff;padding:4px 14px;margin:12px 0}
section#findings li{margin:4px 0}td b{color:#000}span.oracle{color:#a33;font-weight:bold}
pre{background:#f7f7f7;padding:8px;font-size:12px;overflow-x:auto}img.montage{image-rendering:pixelated}
)";

const std::vector<std::string>& modality_axes(const std::string& modality) {
  static const std::vector<std::string> mri = {"accel", "noise", "coils"}, ct = {"views", "photons", "arc"},
                                        denoise = {"noise"}, inpaint = {"keep", "noise"};
  if (modality == "mri") return mri;
  if (modality == "denoise") return denoise;
  if (modality == "inpaint") return inpaint;
  return ct;
}

// Section and grid names of a modality.
std::string modality_title(Modality m) {
  switch (m) {
    case Modality::kMri: return "MRI";
    case Modality::kCt: return "CT";
    case Modality::kDenoise: return "Denoising";
    case Modality::kInpaint: return "Inpainting";
  }
  return "";
}

std::string axis_label(const std::string& axis) {
  if (axis == "accel") return "acceleration R";
  if (axis == "noise") return "noise sigma";
  if (axis == "keep") return "kept pixel fraction";
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
  static std::string id(const std::string& set, const std::string& modality, const std::string& method,
                        const std::vector<std::string>& axes) {
    std::string s = set + "|" + modality + "|" + method;
    for (const auto& a : axes) s += "|" + a;
    return s;
  }
  const SummaryRow* find(const std::string& set, const Acquisition& a, const std::string& method) const {
    std::vector<std::string> axes;
    for (const auto& n : acquisition_axes()) axes.push_back(axis_value(a, n));
    const auto it = rows.find(id(set, std::string(to_string(a.modality)), method, axes));
    return it == rows.end() ? nullptr : it->second;
  }
};

// Fixed-point text of a metric value or difference (PSNR 2 decimals, SSIM 3, others 4 significant).
std::string val(const std::string& metric, double v) {
  if (std::isnan(v)) return "n/a";
  char buf[48];
  if (metric == "psnr") std::snprintf(buf, sizeof buf, "%.2f", v);
  else if (metric == "ssim") std::snprintf(buf, sizeof buf, "%.3f", v);
  else return format_sig(v, 4);
  return buf;
}

std::string unit(const std::string& metric) { return metric == "psnr" ? " dB" : ""; }

std::string interval(const std::string& metric, double lo, double hi) {
  if (std::isnan(lo) || std::isnan(hi)) return "95 % CI n/a (n &lt; 2)";
  return "95 % CI [" + val(metric, lo) + ", " + val(metric, hi) + "]";
}

std::string pval(double p) {
  if (std::isnan(p)) return "n/a";
  if (p < 1e-4) return "&lt; 0.0001";
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.4f", p);
  return buf;
}

// Method name for HTML, with the oracle mark.
std::string method_html(const SummaryRow& r) {
  std::string s = "<b>" + html_escape(r.method) + "</b>";
  if (r.oracle()) s += " <span class=\"oracle\">[" + std::string(kOracleMark) + "]</span>";
  return s;
}

// A small inline SVG of the per-repetition values of a cell on the row's common range.
std::string strip_svg(const std::vector<double>& v, double lo, double hi, double mean) {
  const double w = 90;
  const double span = hi > lo ? hi - lo : 1.0;
  auto X = [&](double x) { return 4.0 + (w - 8.0) * (x - lo) / span; };
  std::string o = "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"90\" height=\"12\" viewBox=\"0 0 90 12\">";
  o += "<line x1=\"4\" x2=\"86\" y1=\"6\" y2=\"6\" stroke=\"#bbb\"/>";
  char buf[96];
  for (double x : v) {
    if (!std::isfinite(x)) continue;
    std::snprintf(buf, sizeof buf, "<circle cx=\"%.1f\" cy=\"6\" r=\"2\" fill=\"#0072B2\" fill-opacity=\"0.6\"/>", X(x));
    o += buf;
  }
  if (std::isfinite(mean)) {
    std::snprintf(buf, sizeof buf, "<line x1=\"%.1f\" x2=\"%.1f\" y1=\"1\" y2=\"11\" stroke=\"#000\" stroke-width=\"1.5\"/>",
                  X(mean), X(mean));
    o += buf;
  }
  return o + "</svg>";
}

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


// Robustness of a learned method: the drop of `metric` from its training
// condition `train` to a shifted condition `shift`, paired by object and
// repetition, next to the same drop of the best classical method of the
// training condition (classical rows of the same two conditions).
struct Drop {
  PairedComparison learned, classical, difference;  // difference: learned drop - classical drop
};

// Mean of a minus mean of b for two independent samples: Welch's t interval
// and two-sided p (Welch, Biometrika 1947); n = both sample sizes together.
PairedComparison compare_unpaired(const std::vector<double>& a, const std::vector<double>& b) {
  PairedComparison r;
  r.test = "welch t";
  r.n = int(a.size() + b.size());
  const double nan = std::numeric_limits<double>::quiet_NaN();
  if (a.size() < 2 || b.size() < 2) {
    r.mean_diff = r.ci_low = r.ci_high = r.p_value = nan;
    return r;
  }
  auto moments = [](const std::vector<double>& v, double& mean, double& var) {
    mean = 0;
    for (double x : v) mean += x;
    mean /= double(v.size());
    var = 0;
    for (double x : v) var += (x - mean) * (x - mean);
    var /= double(v.size() - 1);
  };
  double ma, va, mb, vb;
  moments(a, ma, va);
  moments(b, mb, vb);
  const double na = double(a.size()), nb = double(b.size());
  r.mean_diff = ma - mb;
  const double se2 = va / na + vb / nb;
  if (!(se2 > 0)) {
    r.ci_low = r.ci_high = r.mean_diff;
    r.p_value = r.mean_diff == 0 ? 1.0 : 0.0;
    return r;
  }
  const double se = std::sqrt(se2);
  const double dof = se2 * se2 / ((va / na) * (va / na) / (na - 1) + (vb / nb) * (vb / nb) / (nb - 1));
  const double q = student_t_quantile(0.975, dof);
  r.ci_low = r.mean_diff - q * se;
  r.ci_high = r.mean_diff + q * se;
  r.p_value = std::min(1.0, 2.0 * (1.0 - student_t_cdf(std::fabs(r.mean_diff / se), dof)));
  return r;
}

// The values of metric k of rows a and b for the sample keys both have (a[i] and b[i] share a key).
void pair_samples(const SummaryRow& a, const SummaryRow& b, size_t k, std::vector<double>& va, std::vector<double>& vb) {
  std::map<std::string, double> of_b;
  for (size_t i = 0; i < b.sample_keys.size(); ++i) of_b[b.sample_keys[i]] = b.samples[k][i];
  for (size_t i = 0; i < a.sample_keys.size(); ++i) {
    const auto it = of_b.find(a.sample_keys[i]);
    if (it == of_b.end()) continue;
    va.push_back(a.samples[k][i]);
    vb.push_back(it->second);
  }
}

// Drops between conditions on different objects (an object-set shift): the
// means of the two conditions compared unpaired, and the learned-minus-classical
// differences (paired within each condition) compared unpaired.
Drop unpaired_drops(const SummaryRow& lt, const SummaryRow& ls, const SummaryRow& ct, const SummaryRow& cs, size_t k) {
  Drop r;
  r.learned = compare_unpaired(lt.samples[k], ls.samples[k]);
  r.classical = compare_unpaired(ct.samples[k], cs.samples[k]);
  std::vector<double> a, b, gt, gs;
  pair_samples(lt, ct, k, a, b);
  for (size_t i = 0; i < a.size(); ++i) gt.push_back(a[i] - b[i]);
  a.clear();
  b.clear();
  pair_samples(ls, cs, k, a, b);
  for (size_t i = 0; i < a.size(); ++i) gs.push_back(a[i] - b[i]);
  r.difference = compare_unpaired(gt, gs);
  return r;
}

// "Wilcoxon p" for paired comparisons, "Welch t p" for unpaired ones.
std::string p_label(const PairedComparison& c) { return c.test == "welch t" ? "Welch t p " : "Wilcoxon p "; }

Drop drops(const SummaryRow& lt, const SummaryRow& ls, const SummaryRow& ct, const SummaryRow& cs, size_t k) {
  if (lt.object_set != ls.object_set) return unpaired_drops(lt, ls, ct, cs, k);
  std::map<std::string, std::array<double, 4>> by_key;
  std::map<std::string, int> seen;
  const SummaryRow* rows[4] = {&lt, &ls, &ct, &cs};
  for (int j = 0; j < 4; ++j)
    for (size_t i = 0; i < rows[j]->sample_keys.size(); ++i) {
      by_key[rows[j]->sample_keys[i]][size_t(j)] = rows[j]->samples[k][i];
      seen[rows[j]->sample_keys[i]] |= 1 << j;
    }
  std::vector<double> a, b, c, d;
  for (const auto& [key, v] : by_key)
    if (seen[key] == 15) {
      a.push_back(v[0]);
      b.push_back(v[1]);
      c.push_back(v[2]);
      d.push_back(v[3]);
    }
  Drop r;
  r.learned = compare_paired(a, b);
  r.classical = compare_paired(c, d);
  std::vector<double> dl(a.size()), dc(a.size());
  for (size_t i = 0; i < a.size(); ++i) {
    dl[i] = a[i] - b[i];
    dc[i] = c[i] - d[i];
  }
  r.difference = compare_paired(dl, dc);
  return r;
}

bool excludes_zero(const PairedComparison& p) {
  return p.n >= 2 && !std::isnan(p.ci_low) && (p.ci_low > 0.0 || p.ci_high < 0.0);
}

// What differs between two conditions ("accel 4 -> 6, object set textured -> anatomy").
std::string shift_text(const SummaryRow& from, const SummaryRow& to) {
  std::string s;
  if (from.object_set != to.object_set) s = "objects " + from.object_set + " &rarr; " + to.object_set;
  const auto& names = acquisition_axes();
  for (size_t i = 0; i < names.size(); ++i)
    if (from.axes[i] != to.axes[i]) s += (s.empty() ? "" : ", ") + names[i] + " " + from.axes[i] + " &rarr; " + to.axes[i];
  return s.empty() ? "same condition" : s;
}

struct RobustnessLine {
  const SummaryRow* learned_train = nullptr;
  const SummaryRow* learned_shift = nullptr;
  const SummaryRow* classical_train = nullptr;
  const SummaryRow* classical_shift = nullptr;
  Drop drop;
};

// For every learned method inside its training condition (in_training "yes"),
// each condition of the same modality where it also ran.
std::vector<RobustnessLine> robustness(const std::vector<SummaryRow>& summary, const std::string& metric) {
  const size_t k = size_t(std::find(study_metric_names().begin(), study_metric_names().end(), metric) -
                          study_metric_names().begin());
  std::map<std::string, std::vector<const SummaryRow*>> by_condition;
  for (const SummaryRow& r : summary) by_condition[r.condition_id()].push_back(&r);
  std::vector<RobustnessLine> out;
  for (const SummaryRow& lt : summary) {
    if (!lt.learned() || lt.in_training != "yes") continue;
    const SummaryRow* ct = best_row(by_condition[lt.condition_id()], metric, true);
    if (ct == nullptr) continue;
    for (const SummaryRow& ls : summary) {
      if (&ls == &lt || ls.method != lt.method || ls.modality != lt.modality) continue;
      const SummaryRow* cs = nullptr;
      for (const SummaryRow* r : by_condition[ls.condition_id()])
        if (r->method == ct->method) cs = r;
      if (cs == nullptr) continue;
      RobustnessLine line;
      line.learned_train = &lt;
      line.learned_shift = &ls;
      line.classical_train = ct;
      line.classical_shift = cs;
      line.drop = drops(lt, ls, *ct, *cs, k);
      out.push_back(line);
    }
  }
  return out;
}

std::string findings_html(const std::vector<SummaryRow>& summary, const std::vector<ComparisonRow>& comparisons,
                          const std::string& metric) {
  std::string h = "<section id=\"findings\">\n<h2>Findings</h2>\n";
  h += "<p>From the numbers of this run, metric " + html_escape(metric_label(metric)) +
       ". A difference is called significant when the 95 % confidence interval (Student's t) of the mean paired "
       "difference (same object and repetition) excludes 0; the two-sided Wilcoxon signed-rank p-value is given "
       "beside it (with n pairs it cannot go below 2/2<sup>n</sup>: 0.0625 for n = 5, 0.0078 for n = 8). Methods marked " +
       std::string("<span class=\"oracle\">[") + kOracleMark +
       "]</span> chose their weight by comparing with the truth, which no real scan allows; they are never named "
       "best while a method that does not use the truth is there.</p>\n<ul>\n";
  std::vector<std::string> order;
  std::map<std::string, std::vector<const ComparisonRow*>> best_rows, learned_rows;
  for (const ComparisonRow& c : comparisons) {
    if (c.metric != metric) continue;
    const std::string id = c.a->condition_id();
    if (best_rows.count(id) == 0 && learned_rows.count(id) == 0) order.push_back(id);
    (c.kind == "best" ? best_rows : learned_rows)[id].push_back(&c);
  }
  const size_t k = size_t(std::find(study_metric_names().begin(), study_metric_names().end(), metric) -
                          study_metric_names().begin());
  for (const std::string& id : order) {
    const auto& rows = best_rows[id];
    const SummaryRow* best = rows.empty() ? nullptr : rows.front()->a;
    if (best == nullptr) {
      for (const SummaryRow& r : summary)
        if (r.condition_id() == id) best = &r;
      if (best == nullptr) continue;
    }
    h += "<li><b>" + html_escape(best->condition()) + "</b>: best " + method_html(*best) + ", " + metric + " " +
         val(metric, best->mean[k]) + unit(metric) + " (" + interval(metric, best->ci_low[k], best->ci_high[k]) +
         ", n " + std::to_string(best->n) + ")";
    // Runner-up: the comparison with the smallest mean difference.
    const ComparisonRow* runner = nullptr;
    for (const ComparisonRow* c : rows)
      if (!std::isnan(c->result.mean_diff) &&
          (runner == nullptr || std::fabs(c->result.mean_diff) < std::fabs(runner->result.mean_diff)))
        runner = c;
    if (runner != nullptr) {
      const PairedComparison& r = runner->result;
      if (runner->significant())
        h += "; ahead of the runner-up " + method_html(*runner->b) + " by " + val(metric, r.mean_diff) + unit(metric) +
             " (" + interval(metric, r.ci_low, r.ci_high) + ", Wilcoxon p " + pval(r.p_value) + ", n " +
             std::to_string(r.n) + ")";
      else
        h += "; <b>no significant difference</b> from the runner-up " + method_html(*runner->b) + " (difference " +
             val(metric, r.mean_diff) + unit(metric) + ", " + interval(metric, r.ci_low, r.ci_high) +
             ", Wilcoxon p " + pval(r.p_value) + ", n " + std::to_string(r.n) + ")";
      std::string tied;
      for (const ComparisonRow* c : rows)
        if (c != runner && !c->significant() && c->result.n >= 2) tied += (tied.empty() ? "" : ", ") + method_html(*c->b);
      if (!tied.empty()) h += "; also not significantly different: " + tied;
    }
    for (const ComparisonRow* c : learned_rows[id]) {
      const PairedComparison& r = c->result;
      const bool up = higher_is_better(metric);
      const std::string verdict = !c->significant() ? "no significant difference from"
                                  : ((r.mean_diff > 0) == up ? "significantly better than" : "significantly worse than");
      h += ". Learned " + method_html(*c->a) + " (" +
           (c->a->in_training == "yes" ? std::string("inside its training conditions")
                                       : c->a->in_training == "no" ? std::string("outside its training conditions")
                                                                   : std::string("training conditions partly met")) +
           "): " + verdict + " the best classical method " + method_html(*c->b) + " (difference " +
           val(metric, r.mean_diff) + unit(metric) + ", " + interval(metric, r.ci_low, r.ci_high) + ", Wilcoxon p " +
           pval(r.p_value) + ", n " + std::to_string(r.n) + ")";
    }
    h += ".</li>\n";
  }
  h += "</ul>\n";
  const std::vector<RobustnessLine> rob = robustness(summary, metric);
  if (!rob.empty()) {
    h += "<p>Robustness of the learned methods: drop of " + html_escape(metric_label(metric)) +
         " from the training condition to each shifted condition (training minus shifted, paired by object and "
         "repetition), next to the drop of the best classical method of the training condition.</p>\n<ul>\n";
    for (const RobustnessLine& l : rob) {
      const Drop& d = l.drop;
      const bool up = higher_is_better(metric);
      std::string verdict;
      // A shift to an easier condition (e.g. less noise) raises both scores: then the
      // comparison is of gains, not of losses.
      const bool both_gain = (d.learned.mean_diff < 0) == up && (d.classical.mean_diff < 0) == up;
      const bool learned_worse = (d.difference.mean_diff > 0) == up;
      if (!excludes_zero(d.difference)) verdict = both_gain ? "gains no differently from" : "degrades no differently from";
      else if (learned_worse) verdict = both_gain ? "gains significantly less than" : "degrades significantly more than";
      else verdict = both_gain ? "gains significantly more than" : "degrades significantly less than";
      h += "<li>" + method_html(*l.learned_train) + ", " + shift_text(*l.learned_train, *l.learned_shift) +
           ": drop " + val(metric, d.learned.mean_diff) + unit(metric) + " (" +
           interval(metric, d.learned.ci_low, d.learned.ci_high) + ") vs " + method_html(*l.classical_train) + " " +
           val(metric, d.classical.mean_diff) + unit(metric) + " (" +
           interval(metric, d.classical.ci_low, d.classical.ci_high) + "): " + verdict + " classical (difference " +
           val(metric, d.difference.mean_diff) + unit(metric) + ", " +
           interval(metric, d.difference.ci_low, d.difference.ci_high) + ", " + p_label(d.difference) +
           pval(d.difference.p_value) +
           ", n " + std::to_string(d.difference.n) + ").</li>\n";
    }
    h += "</ul>\n";
  } else {
    bool any_learned = false;
    for (const SummaryRow& r : summary) any_learned = any_learned || r.learned();
    if (any_learned)
      h += "<p>Robustness: no learned method ran inside its training conditions in this study, so no drop from the "
           "training condition can be computed.</p>\n";
  }
  return h + "</section>\n";
}

// What every part of the report reads: the inputs, the summary index and the figure counter.
struct ReportContext {
  const ReportInputs& in;
  const StudyConfig& c;
  const CaseGrid& grid;
  const ResultsTable& results;
  std::string fig_dir;
  Lookup lookup;
  std::vector<std::string> sets;  // object sets in config order
  std::string main_metric;
  std::map<std::string, size_t> row_of_case;
  int failed = 0;
  int figure = 0;

  explicit ReportContext(const ReportInputs& inputs)
      : in(inputs), c(*inputs.config), grid(*inputs.grid), results(*inputs.results), fig_dir(inputs.dir + "/figures") {
    for (const SummaryRow& r : *in.summary) lookup.rows[Lookup::id(r.object_set, r.modality, r.method, r.axes)] = &r;
    for (const StudyPhantom& p : c.phantoms)
      if (std::find(sets.begin(), sets.end(), object_set(p)) == sets.end()) sets.push_back(object_set(p));
    main_metric = std::find(c.metrics.begin(), c.metrics.end(), "psnr") != c.metrics.end() ? "psnr" : c.metrics.front();
    for (size_t r = 0; r < results.rows.size(); ++r) {
      row_of_case[results.cell(r, "case")] = r;
      failed += results.cell(r, "error").empty() ? 0 : 1;
    }
  }
};

// The acquisitions and methods of one modality section.
struct SectionParts {
  Modality modality;
  std::string name;  // "mri", "ct", ...
  std::vector<const Acquisition*> acqs;
  std::vector<const StudyMethod*> methods;
};

std::string method_header(const StudyMethod& m, Modality modality) {
  const std::string rule = lambda_rule(m, modality);
  if (rule == "oracle") return "<br><span class=\"oracle\">[" + std::string(kOracleMark) + "]</span>";
  return "<br><small>&lambda; " + html_escape(rule) + "</small>";
}

// "grid" row: cases per modality (acquisitions x methods that run there) x objects x repetitions.
std::string grid_row_html(const ReportContext& x) {
  std::string terms;
  long long per_object = 0;
  for (const Modality mod : all_modalities()) {
    long long na = 0, nm = 0;
    for (const Acquisition& a : x.grid.acquisitions) na += a.modality == mod ? 1 : 0;
    for (const StudyMethod& m : x.c.methods) nm += m.applies_to(mod) ? 1 : 0;
    if (na == 0 || nm == 0) continue;
    terms += std::string(terms.empty() ? "" : " + ") + modality_title(mod) + " " + std::to_string(na) +
             " acquisition" + (na == 1 ? "" : "s") + " &times; " + std::to_string(nm) + " method" +
             (nm == 1 ? "" : "s");
    per_object += na * nm;
  }
  const StudyConfig& c = x.c;
  const long long expected = per_object * (long long)c.phantoms.size() * c.repetitions;
  std::string h = "<tr><th>grid</th><td>" + std::to_string(c.phantoms.size()) + " object" +
                  (c.phantoms.size() == 1 ? "" : "s") + " &times; (" + terms + ") &times; " +
                  std::to_string(c.repetitions) + " repetition" + (c.repetitions == 1 ? "" : "s") + " = " +
                  std::to_string(expected) + " cases";
  if (expected != (long long)x.grid.cases.size())
    h += " (" + std::to_string(x.grid.cases.size()) + " in the grid: methods left out of this build)";
  return h + "; results.csv holds " + std::to_string(x.results.rows.size()) + " rows, " + std::to_string(x.failed) +
         " failed</td></tr>\n";
}

// Title, research-use line, findings, provenance table, learned models and notes.
std::string head_html(const ReportContext& x) {
  const StudyConfig& c = x.c;
  std::string h = "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>recofold study: " +
                  html_escape(c.name) + "</title>\n<style>" + kStyle + "</style>\n</head>\n<body>\n";
  h += "<p class=\"ruo\">" + html_escape(kResearchUseLine) + "</p>\n";
  h += "<h1>recofold study: " + html_escape(c.name) + "</h1>\n";
  if (!c.description.empty()) h += "<p>" + html_escape(c.description) + "</p>\n";
  if (x.in.comparisons != nullptr) h += findings_html(*x.in.summary, *x.in.comparisons, x.main_metric);
  h += "<table>\n<tr><th>producer</th><td>" + html_escape(producer_string()) + "</td></tr>\n";
  h += "<tr><th>created (UTC)</th><td>" + Provenance::utc_timestamp() + "</td></tr>\n";
  h += "<tr><th>config</th><td>" + html_escape(c.file) + " (hash " + c.hash + ")</td></tr>\n";
  h += grid_row_html(x);
  h += "<tr><th>image grid</th><td>" + std::to_string(c.ny) + " &times; " + std::to_string(c.nx) + "</td></tr>\n";
  std::string ph;
  for (const auto& p : c.phantoms) ph += (ph.empty() ? "" : ", ") + p.label;
  h += "<tr><th>phantoms</th><td>" + html_escape(ph) + "</td></tr>\n";
  if (c.region_radius > 0)
    h += "<tr><th>metric region</th><td>centred disc, radius " + format_number(c.region_radius) +
         " of the half-width</td></tr>\n";
  h += "<tr><th>files</th><td>results.csv (one row per case), summary.csv (n, mean, std, 95 % interval per method "
       "and condition), comparisons.csv (paired differences, intervals, Wilcoxon p-values), robustness.csv (with a "
       "learned method inside its training condition: drops under each shift), figures/ (SVG plots, "
       "PNG montages), images/ (montage reconstructions)</td></tr>\n</table>\n";
  for (const StudyMethod& m : c.methods)
    if (m.learned() && x.in.learned != nullptr) {
      const std::string json = x.in.learned->trained_on_json(m.name);
      h += "<p>Learned method <b>" + html_escape(m.name) + "</b>: model " +
           html_escape(x.in.learned->model_path(m.name)) + "; trained on " +
           html_escape(json.empty() ? "(not recorded)" : json) +
           ". Rows inside these conditions are shaded green in the tables and ringed in the plots.</p>\n";
    }
  if (!c.notes.empty()) {
    h += "<ul>\n";
    for (const auto& n : c.notes) h += "<li>" + html_escape(n) + "</li>\n";
    h += "</ul>\n";
  }
  return h;
}

// One table cell: per metric mean, interval and per-repetition strip; best of the row bold.
std::string summary_cell_html(const ReportContext& x, const SummaryRow& r, const std::vector<const SummaryRow*>& present) {
  const std::string cls = r.failed > 0 ? " class=\"fail\"" : (r.in_training == "yes" ? " class=\"in\"" : "");
  std::string h = "<td" + cls + ">";
  for (const auto& metric : x.c.metrics) {
    const size_t k = metric_index(metric);
    const SummaryRow* best = best_row(present, metric, false);
    double lo = std::numeric_limits<double>::infinity(), hi = -lo;
    for (const SummaryRow* q : present)
      for (double v : q->samples[k])
        if (std::isfinite(v)) {
          lo = std::min(lo, v);
          hi = std::max(hi, v);
        }
    std::string v = val(metric, r.mean[k]);
    if (best == &r) v = "<b>" + v + "</b>";
    h += metric + " " + v + " <small>[" + val(metric, r.ci_low[k]) + ", " + val(metric, r.ci_high[k]) + "]</small><br>" +
         strip_svg(r.samples[k], lo, hi, r.mean[k]) + "<br>";
  }
  return h + "n " + std::to_string(r.n) + (r.failed ? ", failed " + std::to_string(r.failed) : "") + "</td>";
}

// Methods x conditions (object set x acquisition), then the failed cases of the modality.
std::string condition_table_html(const ReportContext& x, const SectionParts& s) {
  std::string h =
      "<p>Each cell: per metric the mean, its 95 % confidence interval (Student's t over objects and "
      "repetitions) and the per-repetition values (dots; the bar is the mean; one common range per row and "
      "metric); the best mean of each row and metric is bold. Shaded green: inside a learned method's "
      "training conditions.</p>\n<table>\n<tr><th>condition</th>";
  for (const StudyMethod* m : s.methods) h += "<th>" + html_escape(m->name) + method_header(*m, s.modality) + "</th>";
  h += "</tr>\n";
  for (const std::string& set : x.sets)
    for (const Acquisition* a : s.acqs) {
      std::vector<const SummaryRow*> row_rows, present;
      for (const StudyMethod* m : s.methods) row_rows.push_back(x.lookup.find(set, *a, m->name));
      for (const SummaryRow* r : row_rows)
        if (r != nullptr) present.push_back(r);
      if (present.empty()) continue;
      std::string cond = x.sets.size() > 1 ? "objects " + set : "";
      for (const auto& ax : acquisition_axes())
        if (!axis_value(*a, ax).empty()) cond += (cond.empty() ? "" : ", ") + ax + " " + axis_value(*a, ax);
      h += "<tr><td>" + html_escape(cond) + "</td>";
      for (const SummaryRow* r : row_rows) h += r == nullptr ? "<td>&ndash;</td>" : summary_cell_html(x, *r, present);
      h += "</tr>\n";
    }
  h += "</table>\n";
  for (size_t r = 0; r < x.results.rows.size(); ++r)
    if (x.results.cell(r, "modality") == s.name && !x.results.cell(r, "error").empty())
      h += "<p>Failed case " + html_escape(x.results.cell(r, "case")) + ": " +
           html_escape(x.results.cell(r, "error")) + "</p>\n";
  return h;
}

// The plots' reference: the first object set with a row inside a learned method's training
// conditions (else the first set), and an acquisition inside them (else the first).
std::pair<std::string, const Acquisition*> plot_reference(const ReportContext& x, const SectionParts& s) {
  std::string ref_set = x.sets.front();
  for (const SummaryRow& r : *x.in.summary)
    if (r.modality == s.name && r.in_training == "yes") {
      ref_set = r.object_set;
      break;
    }
  for (const Acquisition* a : s.acqs)
    for (const StudyMethod* m : s.methods) {
      const SummaryRow* r = x.lookup.find(ref_set, *a, m->name);
      if (r != nullptr && r->in_training == "yes") return {ref_set, a};
    }
  return {ref_set, s.acqs.front()};
}

// One metric against one axis: SVG inline, SVG and PNG files in figures/.
std::string axis_figure_html(ReportContext& x, const SectionParts& s, const std::string& axis, const std::string& metric,
                             const std::vector<const Acquisition*>& line, const std::string& ref_set,
                             const std::string& fixed) {
  LinePlot plot;
  plot.title = metric_label(metric) + " vs " + axis_label(axis);
  plot.x_label = axis_label(axis);
  plot.y_label = metric_label(metric);
  for (const StudyMethod* m : s.methods) {
    PlotSeries series;
    series.name = lambda_rule(*m, s.modality) == "oracle" ? m->name + " [" + kOracleMark + "]" : m->name;
    series.dashed = m->learned();
    for (const Acquisition* a : line) {
      const SummaryRow* r = x.lookup.find(ref_set, *a, m->name);
      series.x.push_back(std::strtod(axis_value(*a, axis).c_str(), nullptr));
      series.y.push_back(r ? r->mean[metric_index(metric)] : std::nan(""));
      series.marked.push_back(r != nullptr && r->in_training == "yes");
    }
    plot.series.push_back(std::move(series));
  }
  const std::string svg = svg_line_plot(plot);
  const std::string name = s.name + "-" + metric + "-vs-" + axis + ".svg";
  write_text_atomic(x.fig_dir + "/" + name, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n" + svg);
  const std::string png = name.substr(0, name.size() - 4) + ".png";
  write_png_plot(x.fig_dir + "/" + png, plot);
  std::string legend;
  for (size_t k = 0; k < s.methods.size(); ++k) legend += (k ? ", " : "") + std::to_string(k + 1) + " " + plot.series[k].name;
  ++x.figure;
  return "<figure>" + svg + "<figcaption>Figure " + std::to_string(x.figure) + ": " + html_escape(plot.title) +
         "; objects " + html_escape(ref_set) + ", mean over objects and repetitions; other axes: " +
         html_escape(fixed) + " (figures/" + name + "; PNG copy figures/" + png +
         " with numbered legend: " + html_escape(legend) + ").</figcaption></figure>\n";
}

// PSNR and SSIM against each axis with more than one value, the other axes at the reference.
std::string axis_plots_html(ReportContext& x, const SectionParts& s) {
  const auto [ref_set, ref] = plot_reference(x, s);
  std::string h;
  for (const std::string& axis : modality_axes(s.name)) {
    std::vector<const Acquisition*> line;
    for (const Acquisition* a : s.acqs) {
      bool same = true;
      for (const auto& other : acquisition_axes())
        if (other != axis && axis_value(*a, other) != axis_value(*ref, other)) same = false;
      if (same) line.push_back(a);
    }
    if (line.size() < 2) continue;
    std::sort(line.begin(), line.end(), [&](const Acquisition* p, const Acquisition* q) {
      return std::strtod(axis_value(*p, axis).c_str(), nullptr) < std::strtod(axis_value(*q, axis).c_str(), nullptr);
    });
    std::string fixed;
    for (const auto& other : acquisition_axes())
      if (other != axis && !axis_value(*ref, other).empty())
        fixed += (fixed.empty() ? "" : ", ") + other + " " + axis_value(*ref, other);
    for (const std::string metric : {"psnr", "ssim"}) h += axis_figure_html(x, s, axis, metric, line, ref_set, fixed);
  }
  return h;
}

// Tiles of a montage: top row images at the truth's window, bottom row |image - truth| at
// err_hi, `up`-fold enlarged, with an error colour bar right of the bottom row.
struct Montage {
  const ImageF& truth;
  double lo, range, err_hi;
  Index up, th, tw, gap = 4, bar_w = 14;
  ImageF pixels;

  Montage(const ImageF& t, Index columns) : truth(t) {
    lo = t.minCoeff();
    const double hi = t.maxCoeff();
    range = hi > lo ? hi - lo : 1.0;
    err_hi = 0.25 * range;
    up = std::max<Index>(1, std::min<Index>(4, 160 / std::max(t.rows(), t.cols())));
    th = t.rows() * up;
    tw = t.cols() * up;
    pixels = ImageF::Ones(2 * th + gap, columns * tw + (columns - 1) * gap + 2 * gap + bar_w);
    for (Index y = 0; y < th; ++y)
      for (Index xx = 0; xx < bar_w; ++xx)
        pixels(th + gap + y, columns * tw + (columns - 1) * gap + 2 * gap + xx) = float(1.0 - double(y) / double(th - 1));
  }
  void put(const ImageF& img, Index col) {
    for (int row = 0; row < 2; ++row)
      for (Index y = 0; y < th; ++y)
        for (Index xx = 0; xx < tw; ++xx) {
          double v = img(y / up, xx / up);
          v = row == 1 ? std::fabs(v - truth(y / up, xx / up)) / err_hi : (v - lo) / range;
          pixels(row * (th + gap) + y, col * (tw + gap) + xx) = float(std::clamp(v, 0.0, 1.0));
        }
  }
  std::string label(const std::string& text) const {
    return "<span style=\"display:inline-block;vertical-align:bottom;width:" + std::to_string(tw) + "px;margin-right:" +
           std::to_string(gap) + "px;font-size:11px;overflow-wrap:anywhere\">" + text + "</span>";
  }
};

// Truth and every method's reconstruction of the first phantom, repetition 0, for one acquisition.
std::string montage_html(ReportContext& x, const SectionParts& s, const Acquisition& a, int index) {
  const std::string mkey = x.c.phantoms.front().label + "|" + a.key() + "|r0";
  const std::string truth_path = study_image_path(x.in.dir, "truth|" + mkey);
  if (!file_exists(truth_path)) return "";
  const ImageF truth = read_image(truth_path);
  Montage mont(truth, Index(s.methods.size()) + 1);
  mont.put(truth, 0);  // zero error: a black reference tile
  std::string caption = "columns: truth", labels = mont.label("truth");
  for (size_t k = 0; k < s.methods.size(); ++k) {
    const StudyMethod& m = *s.methods[k];
    const std::string key = x.c.phantoms.front().label + "|" + a.key() + "|" + m.name + "|r0";
    const std::string path = study_image_path(x.in.dir, key);
    caption += ", " + m.name;
    const auto it = x.row_of_case.find(key);
    if (!file_exists(path) || it == x.row_of_case.end() || !x.results.cell(it->second, "error").empty()) {
      caption += " (failed or missing)";
      labels += mont.label("<b>" + html_escape(m.name) + "</b><br>failed or missing");
      continue;
    }
    mont.put(read_image(path), Index(k) + 1);
    const double tp = std::strtod(x.results.cell(it->second, "psnr").c_str(), nullptr);
    caption += " (PSNR " + format_sig(tp, 4) + " dB, SSIM " +
               format_sig(std::strtod(x.results.cell(it->second, "ssim").c_str(), nullptr), 3) + ")";
    const bool oracle = lambda_rule(m, s.modality) == "oracle";
    labels += mont.label("<b>" + html_escape(m.name) + "</b>" +
                         (oracle ? " <span class=\"oracle\">[" + std::string(kOracleMark) + "]</span>" : std::string()) +
                         "<br>PSNR " + val("psnr", tp) + " dB");
  }
  const std::string name = "montage-" + s.name + "-" + std::to_string(index) + ".png";
  PngWindow w;
  w.auto_window = false;
  w.lo = 0.0;
  w.hi = 1.0;
  write_png(x.fig_dir + "/" + name, mont.pixels, w);
  ++x.figure;
  return "<figure><div>" + labels + "</div>" + embed_png(x.fig_dir + "/" + name, "montage " + a.key(), "montage") +
         "<div style=\"font-size:11px\">error colour bar (right of the bottom row): black 0, white &ge; " +
         format_sig(mont.err_hi, 3) + "</div><figcaption>Figure " + std::to_string(x.figure) + ": " +
         html_escape(a.key()) + ". Top: " + html_escape(caption) + "; window [" + format_sig(mont.lo, 3) + ", " +
         format_sig(truth.maxCoeff(), 3) +
         "]. Bottom: |reconstruction - truth| at the common window [0, " + format_sig(mont.err_hi, 3) +
         "], colour bar at the right (figures/" + name + ").</figcaption></figure>\n";
}

// ---------------------------------------------------------------- robustness
// The drops of robustness() as a table, robustness.csv and figures (metric
// against each single shift, the training condition ringed).

// The one dimension in which two conditions differ ("object set" or an
// acquisition axis); "" when they differ in none or in more than one.
std::string shifted_dimension(const SummaryRow& from, const SummaryRow& to) {
  std::string dim;
  int count = from.object_set != to.object_set ? 1 : 0;
  if (count) dim = "object set";
  const auto& names = acquisition_axes();
  for (size_t i = 0; i < names.size(); ++i)
    if (from.axes[i] != to.axes[i]) {
      ++count;
      dim = names[i];
    }
  return count == 1 ? dim : "";
}

std::string plain_shift(const SummaryRow& from, const SummaryRow& to) {
  std::string t = shift_text(from, to);
  for (size_t k; (k = t.find("&rarr;")) != std::string::npos;) t.replace(k, 6, "->");
  return t;
}

// robustness.csv: every learned method, shifted condition and metric.
void write_robustness_csv(const std::string& path, const std::vector<SummaryRow>& summary,
                          const std::vector<std::string>& metrics) {
  std::string out =
      "learned_method,classical_method,metric,training_condition,shifted_condition,shift,n,learned_drop,"
      "learned_ci95_low,learned_ci95_high,classical_drop,classical_ci95_low,classical_ci95_high,drop_difference,"
      "difference_ci95_low,difference_ci95_high,p_value,test\n";
  auto num = [](double v) { return std::isnan(v) ? std::string() : format_number(v); };
  for (const std::string& metric : metrics)
    for (const RobustnessLine& l : robustness(summary, metric)) {
      const Drop& d = l.drop;
      out += csv_field(l.learned_train->method) + "," + csv_field(l.classical_train->method) + "," + metric + "," +
             csv_field(l.learned_train->condition()) + "," + csv_field(l.learned_shift->condition()) + "," +
             csv_field(plain_shift(*l.learned_train, *l.learned_shift)) + "," + std::to_string(d.difference.n) + "," +
             num(d.learned.mean_diff) + "," + num(d.learned.ci_low) + "," + num(d.learned.ci_high) + "," +
             num(d.classical.mean_diff) + "," + num(d.classical.ci_low) + "," + num(d.classical.ci_high) + "," +
             num(d.difference.mean_diff) + "," + num(d.difference.ci_low) + "," + num(d.difference.ci_high) + "," +
             num(d.difference.p_value) + "," + csv_field(d.difference.test) + "\n";
    }
  write_text_atomic(path, out);
}

std::string robustness_table_html(const std::vector<RobustnessLine>& rob, const std::string& metric) {
  std::string h = "<table>\n<tr><th>learned method</th><th>shift from its training condition</th><th>learned drop</th>"
                  "<th>best classical (at training)</th><th>classical drop</th><th>learned minus classical drop</th>"
                  "<th>p (test)</th><th>n</th></tr>\n";
  for (const RobustnessLine& l : rob) {
    const Drop& d = l.drop;
    const bool sig = excludes_zero(d.difference);
    h += "<tr><td>" + method_html(*l.learned_train) + "</td><td>" + shift_text(*l.learned_train, *l.learned_shift) +
         "</td><td>" + val(metric, d.learned.mean_diff) + unit(metric) + "<br><small>" +
         interval(metric, d.learned.ci_low, d.learned.ci_high) + "</small></td><td>" + method_html(*l.classical_train) +
         "</td><td>" + val(metric, d.classical.mean_diff) + unit(metric) + "<br><small>" +
         interval(metric, d.classical.ci_low, d.classical.ci_high) + "</small></td><td>" + (sig ? "<b>" : "") +
         val(metric, d.difference.mean_diff) + unit(metric) + (sig ? "</b>" : "") + "<br><small>" +
         interval(metric, d.difference.ci_low, d.difference.ci_high) + "</small></td><td>" +
         pval(d.difference.p_value) + " (" + (d.difference.test == "welch t" ? "Welch t, unpaired" : "Wilcoxon") +
         ")</td><td>" + std::to_string(d.difference.n) + "</td></tr>\n";
  }
  return h + "</table>\n";
}

// x position of a condition along `dim`: the axis value, or for object sets
// the position in `sets` (training set first).
double shift_x(const SummaryRow& r, const std::string& dim, const std::vector<std::string>& sets) {
  if (dim == "object set") return double(std::find(sets.begin(), sets.end(), r.object_set) - sets.begin());
  const auto& names = acquisition_axes();
  const size_t i = size_t(std::find(names.begin(), names.end(), dim) - names.begin());
  return std::strtod(r.axes[i].c_str(), nullptr);
}

// One figure: `metric` of the learned method and of the best classical one against `dim`.
std::string robustness_figure_html(ReportContext& x, const std::vector<const RobustnessLine*>& lines,
                                   const std::string& dim, const std::string& metric) {
  const RobustnessLine& first = *lines.front();
  std::vector<std::string> sets = {first.learned_train->object_set};
  for (const RobustnessLine* l : lines)
    if (std::find(sets.begin(), sets.end(), l->learned_shift->object_set) == sets.end())
      sets.push_back(l->learned_shift->object_set);
  const size_t k = metric_index(metric);
  LinePlot plot;
  plot.title = metric_label(metric) + " of " + first.learned_train->method + " against " +
               (dim == "object set" ? std::string("object set") : axis_label(dim));
  plot.x_label = dim == "object set" ? "object set (0 = training set)" : axis_label(dim);
  plot.y_label = metric_label(metric);
  plot.marked_label = "training condition";
  for (int which = 0; which < 2; ++which) {
    std::vector<std::pair<double, std::pair<double, bool>>> pts;
    const SummaryRow* train = which == 0 ? first.learned_train : first.classical_train;
    pts.push_back({shift_x(*train, dim, sets), {train->mean[k], true}});
    for (const RobustnessLine* l : lines) {
      const SummaryRow* r = which == 0 ? l->learned_shift : l->classical_shift;
      pts.push_back({shift_x(*r, dim, sets), {r->mean[k], false}});
    }
    std::sort(pts.begin(), pts.end());
    PlotSeries series;
    series.name = which == 0 ? train->method + " (learned)" : train->label() + " (best classical at training)";
    series.dashed = which == 0;
    for (const auto& [px, p] : pts) {
      series.x.push_back(px);
      series.y.push_back(p.first);
      series.marked.push_back(p.second);
    }
    plot.series.push_back(std::move(series));
  }
  std::string stem = "robustness-" + first.learned_train->method + "-" + metric + "-vs-" + dim;
  for (char& ch : stem) ch = std::isalnum(static_cast<unsigned char>(ch)) || ch == '-' ? ch : '-';
  const std::string svg = svg_line_plot(plot);
  write_text_atomic(x.fig_dir + "/" + stem + ".svg", "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n" + svg);
  write_png_plot(x.fig_dir + "/" + stem + ".png", plot);
  std::string set_note;
  if (dim == "object set")
    for (size_t i = 0; i < sets.size(); ++i) set_note += (i ? ", " : "; object sets: ") + std::to_string(i) + " " + sets[i];
  ++x.figure;
  return "<figure>" + svg + "<figcaption>Figure " + std::to_string(x.figure) + ": " + html_escape(plot.title) +
         ", mean over objects and repetitions, ringed: the training condition (" +
         html_escape(first.learned_train->condition()) + ")" + html_escape(set_note) + " (figures/" + stem +
         ".svg; PNG copy figures/" + stem + ".png, legend 1 " + html_escape(plot.series[0].name) + ", 2 " +
         html_escape(plot.series[1].name) + ").</figcaption></figure>\n";
}

// The robustness section: table of drops for the main metric, robustness.csv for every metric, and one figure
// per learned method, training condition and single shifted dimension.
std::string robustness_section_html(ReportContext& x) {
  const std::vector<RobustnessLine> rob = robustness(*x.in.summary, x.main_metric);
  if (rob.empty()) return "";
  write_robustness_csv(x.in.dir + "/robustness.csv", *x.in.summary, x.c.metrics);
  std::string h = "<section id=\"robustness\">\n<h2>Robustness of the learned methods</h2>\n<p>Drop of " +
                  html_escape(metric_label(x.main_metric)) +
                  " from the learned method's training condition to each shifted condition (training minus shifted, "
                  "paired by object and repetition; another object set has other objects, so those drops compare "
                  "means unpaired, Welch's t; 95 % intervals), next to the drop of the best classical method "
                  "of the training condition between the same two conditions. Bold: the two drops differ "
                  "significantly. Every metric: robustness.csv.</p>\n";
  h += robustness_table_html(rob, x.main_metric);
  std::map<std::pair<const SummaryRow*, std::string>, std::vector<const RobustnessLine*>> groups;
  std::vector<std::pair<const SummaryRow*, std::string>> order;
  for (const RobustnessLine& l : rob) {
    const std::string dim = shifted_dimension(*l.learned_train, *l.learned_shift);
    if (dim.empty()) continue;
    const auto key = std::make_pair(l.learned_train, dim);
    if (groups.count(key) == 0) order.push_back(key);
    groups[key].push_back(&l);
  }
  for (const auto& key : order) h += robustness_figure_html(x, groups[key], key.second, x.main_metric);
  return h + "</section>\n";
}

// One modality: table, plots against each varied axis, montages.
std::string modality_section_html(ReportContext& x, Modality modality) {
  SectionParts s{modality, std::string(to_string(modality)), {}, {}};
  for (const Acquisition& a : x.grid.acquisitions)
    if (a.modality == modality) s.acqs.push_back(&a);
  for (const StudyMethod& m : x.c.methods)
    if (m.applies_to(modality)) s.methods.push_back(&m);
  if (s.acqs.empty() || s.methods.empty()) return "";
  std::string h = "<h2>" + modality_title(modality) + " protocols</h2>\n";
  h += condition_table_html(x, s);
  h += axis_plots_html(x, s);
  h += "<h3>Montages (" + html_escape(x.c.phantoms.front().label) + ", repetition 0)</h3>\n";
  int index = 0;
  for (const Acquisition* a : s.acqs) {
    const std::string fig = montage_html(x, s, *a, index);
    if (!fig.empty()) ++index;
    h += fig;
  }
  return h;
}

}  // namespace

std::string write_study_report(const ReportInputs& in) {
  ReportContext x(in);
  ::mkdir(x.fig_dir.c_str(), 0777);
  std::string h = head_html(x);
  h += robustness_section_html(x);
  for (const Modality modality : all_modalities()) h += modality_section_html(x, modality);
  h += "<h2>Study config</h2>\n<pre>" + html_escape(x.c.text) + "</pre>\n";
  h += "<p class=\"ruo\">" + html_escape(kResearchUseLine) + "</p>\n</body>\n</html>\n";
  const std::string path = in.dir + "/report.html";
  write_text_atomic(path, h);
  return path;
}

}  // namespace recofold
