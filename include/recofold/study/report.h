// SPDX-License-Identifier: Apache-2.0
// The study report: one self-contained HTML page with tables, SVG plots and PNG montages.
//
// report.html holds, in order: the research-use line (SAFETY.md), the study
// name, <section id="findings"> (per condition the best method and its
// margin over the runner-up with the 95 % interval of the paired difference
// and the Wilcoxon p-value, or "no significant difference"; each learned
// method against the best classical one), provenance, notes, a table of
// methods x conditions (mean, 95 % interval, per-repetition points; best
// mean per metric and row in bold; oracle-tuned methods marked "oracle (uses
// the ground truth)"), plots of PSNR and SSIM against every acquisition
// axis with more than one value (one line per method; the other axes held at
// a reference value, points inside a learned method's training conditions
// ringed), a montage per condition (truth, each method's reconstruction and
// its error map, all reconstructions at the truth's window and all error maps
// at one common window), and the config text. Images are embedded (inline
// SVG, base64 PNG), so the page needs no other file. The plots are also
// written to figures/*.svg (with PNG copies, figures/*-vs-*.png, numbered legends) and
// the montages to figures/montage-*.png.
#pragma once

#include <string>
#include <vector>

#include "recofold/study/case_grid.h"
#include "recofold/study/results_table.h"
#include "recofold/study/study_config.h"
#include "recofold/study/summary.h"

namespace recofold {

class LearnedModelSet;
struct ComparisonRow;

struct ReportInputs {
  std::string dir;                                // study folder (images/ are read from it)
  const StudyConfig* config = nullptr;
  const CaseGrid* grid = nullptr;
  const ResultsTable* results = nullptr;
  const std::vector<SummaryRow>* summary = nullptr;
  const std::vector<ComparisonRow>* comparisons = nullptr;  // may be null (no findings then)
  const LearnedModelSet* learned = nullptr;       // may be null (merged folders)
};

// Writes figures/ and report.html into inputs.dir; returns the report's path.
std::string write_study_report(const ReportInputs& inputs);

// Where the reconstruction (or, for key "truth|<measurement key>", the truth)
// of a montage case is stored inside a study folder.
std::string study_image_path(const std::string& dir, const std::string& key);

}  // namespace recofold
