// SPDX-License-Identifier: Apache-2.0
// results.csv columns, row formatting and reading.
#include "recofold/study/results_table.h"

#include <cmath>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "study_util.h"

namespace recofold {

const std::vector<std::string>& result_columns() {
  static const std::vector<std::string> cols = [] {
    std::vector<std::string> c = {"case", "phantom", "object_set", "modality", "method", "prior"};
    for (const auto& a : acquisition_axes()) c.push_back(a);
    for (const char* k : {"repetition", "lambda", "lambda_rule", "psnr", "ssim", "nrmse", "hfen", "time", "iterations",
                          "in_training_conditions", "outside_training", "error", "measurement_file", "image_file"})
      c.push_back(k);
    return c;
  }();
  return cols;
}

std::string result_header() {
  std::string s;
  for (const auto& c : result_columns()) s += (s.empty() ? "" : ",") + c;
  return s;
}

std::string lambda_rule(const StudyMethod& m, Modality modality) {
  if (m.learned()) return "learned";
  if (m.prior_name(modality) == "none") return "none";
  const ReconSpec d = m.spec.with_defaults(modality);
  if (d.lambda.rule == LambdaRule::kOracle) return "oracle";
  if (d.lambda.mode == LambdaMode::kValue) return "fixed";
  return "auto";
}

std::string object_set(const StudyPhantom& p) { return p.family.empty() ? p.label : p.family; }

std::string format_result_row(const StudyConfig& config, const CaseGrid& grid, const StudyCase& c,
                              const CaseOutcome& o) {
  const Acquisition& a = grid.acquisitions[size_t(c.acquisition)];
  const StudyMethod& m = config.methods[size_t(c.method)];
  const StudyPhantom& p = config.phantoms[size_t(c.phantom)];
  std::vector<std::string> cells = {c.key, p.label, object_set(p), std::string(to_string(a.modality)), m.name,
                                    m.prior_name(a.modality)};
  for (const auto& axis : acquisition_axes()) cells.push_back(axis_value(a, axis));
  cells.push_back(std::to_string(c.repetition));
  cells.push_back(std::isnan(o.lambda) ? "" : format_sig(o.lambda, 6));
  cells.push_back(lambda_rule(m, a.modality));
  if (o.ok) {
    cells.push_back(format_sig(o.scores.psnr, 8));
    cells.push_back(format_sig(o.scores.ssim, 8));
    cells.push_back(format_sig(o.scores.nrmse, 8));
    cells.push_back(format_sig(o.scores.hfen, 8));
  } else {
    for (int i = 0; i < 4; ++i) cells.push_back("");
  }
  cells.push_back(format_sig(o.seconds, 4));
  cells.push_back(std::to_string(o.iterations));
  cells.push_back(o.in_training);
  cells.push_back(o.outside);
  cells.push_back(o.ok ? "" : (o.error.empty() ? "failed" : o.error));
  cells.push_back(o.measurement_file);
  cells.push_back(o.image_file);
  std::string s;
  for (size_t i = 0; i < cells.size(); ++i) s += (i ? "," : "") + csv_field(cells[i]);
  return s;
}

int ResultsTable::column(const std::string& name) const {
  for (size_t i = 0; i < columns.size(); ++i)
    if (columns[i] == name) return int(i);
  return -1;
}

const std::string& ResultsTable::cell(size_t r, const std::string& name) const {
  static const std::string empty;
  const int c = column(name);
  if (c < 0 || r >= rows.size() || size_t(c) >= rows[r].size()) return empty;
  return rows[r][size_t(c)];
}

ResultsTable read_results(const std::string& path) {
  const std::string text = read_text_file(path);
  ResultsTable t;
  size_t pos = 0;
  int line_no = 0;
  while (pos < text.size()) {
    const size_t nl = text.find('\n', pos);
    if (nl == std::string::npos) {
      t.had_partial_line = true;
      break;
    }
    const std::string line = text.substr(pos, nl - pos);
    pos = nl + 1;
    ++line_no;
    if (line_no == 1) {
      t.columns = csv_split(line);
      if (t.columns != result_columns())
        throw InputError(path, "header", "is not a recofold results table header (expected " + result_header() + ")",
                         1);
      continue;
    }
    if (line.empty()) continue;
    std::vector<std::string> cells = csv_split(line);
    if (cells.size() != t.columns.size())
      throw InputError(path, "row", "has " + std::to_string(cells.size()) + " cells; expected " +
                                        std::to_string(t.columns.size()),
                       line_no);
    t.rows.push_back(std::move(cells));
  }
  if (t.columns.empty()) throw InputError(path, "header", "missing (empty results table)");
  return t;
}

namespace {
const char kOutputFailed[] = "output failed: ";
}

std::string output_failure(const std::string& what) { return kOutputFailed + what; }

bool is_output_failure(const std::string& error) { return error.rfind(kOutputFailed, 0) == 0; }

std::string results_text(const ResultsTable& t) {
  std::string s;
  for (size_t i = 0; i < t.columns.size(); ++i) s += (i ? "," : "") + csv_field(t.columns[i]);
  s += "\n";
  for (const auto& r : t.rows) {
    for (size_t i = 0; i < r.size(); ++i) s += (i ? "," : "") + csv_field(r[i]);
    s += "\n";
  }
  return s;
}

}  // namespace recofold
