// SPDX-License-Identifier: Apache-2.0
// results.csv of a study: its columns, one row per case, reading back (tolerating a cut-off last line).
//
// Columns, in order:
//   case                    unique case key (case_grid.h)
//   phantom                 object label ("qc-disk", "textured-7-3")
//   object_set              what the summary pools over: the table label, or the family name
//   modality, method, prior
//   pattern, trajectory, readouts, samples, accel, coils, noise, keep, views, arc, photons
//                           acquisition axes (blank for the other modality). MRI:
//                           pattern = the Cartesian mask pattern (blank on a
//                           trajectory); trajectory = radial | radial-golden |
//                           spiral (| file for a measured one), readouts = its
//                           spokes or interleaves, samples = its points per coil
//                           (all three blank for Cartesian masks); accel = R of a
//                           mask, ny nx / samples for a trajectory
//   repetition, lambda      lambda: the prior weight used (blank when none)
//   lambda_rule             how lambda was chosen: auto (from the data alone: discrepancy
//                           principle, CT held-out views), fixed (the config's value),
//                           oracle (best PSNR against the truth over the config's list:
//                           uses the ground truth, no real scan allows it), none (no
//                           prior), learned (weights of a trained model)
//   psnr, ssim, nrmse, hfen the metrics under the names `score --json` uses
//   time                    reconstruction wall time of the case, seconds
//   iterations              solver iterations (0 for direct methods)
//   in_training_conditions  learned methods: yes | no; blank otherwise
//   outside_training        learned methods outside their training conditions: which ones
//                           and how (e.g. "noise 0.02 > trained 0.01"); blank otherwise
//   error                   empty for a successful case, else the error message
//                           ("output failed: ..." when an output could not be
//                           written; such cases run again on resume)
#pragma once

#include <string>
#include <vector>

#include "recofold/study/case_grid.h"
#include "recofold/study/case_runner.h"
#include "recofold/study/study_config.h"

namespace recofold {

const std::vector<std::string>& result_columns();
// The lambda_rule of a method on a modality (auto, fixed, oracle, none,
// learned; after the spec's defaults) and the
// object_set of a phantom (table label or family name).
std::string lambda_rule(const StudyMethod& method, Modality modality);
std::string object_set(const StudyPhantom& phantom);
// The header line (no newline).
std::string result_header();
// One row (no newline) for a case and its outcome.
std::string format_result_row(const StudyConfig& config, const CaseGrid& grid, const StudyCase& c,
                              const CaseOutcome& outcome);

struct ResultsTable {
  std::vector<std::string> columns;
  std::vector<std::vector<std::string>> rows;
  bool had_partial_line = false;  // the file ended in a line without newline (dropped)
  // Index of a column; -1 if absent.
  int column(const std::string& name) const;
  // Cell of row r, column `name` ("" if the column is absent).
  const std::string& cell(size_t r, const std::string& name) const;
};

// Reads a results.csv. A last line without a newline (a write cut off by a
// kill) is dropped. InputError naming the file when the header differs from
// result_columns() or a row has the wrong number of cells.
ResultsTable read_results(const std::string& path);

// Error text of a case whose outputs could not be written (disk full,
// permission): such a case did not fail because of its input, and a resumed
// run runs it again. output_failure(what) = "output failed: " + what.
std::string output_failure(const std::string& what);
bool is_output_failure(const std::string& error);

// The CSV text of a table (header + rows, each line ending in a newline).
std::string results_text(const ResultsTable& table);

}  // namespace recofold
