// SPDX-License-Identifier: Apache-2.0
// CT view sets: full, sparse, limited-arc, golden-angle ordering, views from a file, TOML protocols.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/measurement.h"

namespace recofold {

// Order of the views of an arc.
//   sequential: start + i * arc / N, i = 0..N-1 (equally spaced, increasing)
//   golden:     start + frac(i * g) * arc with g = (sqrt(5) - 1) / 2; over 180
//               degrees successive views differ by 111.246 degrees (Winkelmann
//               et al., IEEE TMI 26, 2007), and any prefix of the sequence
//               covers the arc nearly evenly.
enum class ViewOrder { kSequential, kGolden };
std::string_view to_string(ViewOrder order);
std::optional<ViewOrder> parse_view_order(std::string_view text);  // "sequential" | "golden"

// A view set. Typical sets:
//   full          views = 180 (or more), arc_deg = 180 (parallel) / 360 (fan)
//   sparse-view   views = 60, 30, ... over the same arc
//   limited-angle arc_deg < 180 (parallel): a missing wedge of directions
//   golden        order = golden (views can be dropped from the end)
// Angles cover [start, start + arc) (the end point is left out, so a full
// 180 or 360 degree arc has no duplicate view).
struct ViewSetSpec {
  int views = 180;         // number of views, >= 1
  double arc_deg = 180.0;  // (0, 360]
  double start_deg = 0.0;  // angle of the first view, finite
  ViewOrder order = ViewOrder::kSequential;
  std::string file;  // non-empty: angles come from this file (views/arc/order ignored)

  // Every violation, "views = 0; must be >= 1" style.
  std::vector<std::string> validate() const;
};

// View angles in radians, in acquisition order. Throws InputError when the
// spec is invalid (field "view set") or the file is bad.
std::vector<double> make_view_set(const ViewSetSpec& spec);

std::vector<double> equally_spaced_views(int views, double arc_deg, double start_deg = 0.0);
std::vector<double> golden_angle_views(int views, double arc_deg, double start_deg = 0.0);

// Reads angles in degrees, one per line; blank lines and text after '#' are
// ignored. Returns radians. InputError (file, "angle", reason, line) for a
// line that is not one finite number, or a file without angles.
std::vector<double> read_view_file(const std::string& path);

// A CT protocol file (sampling-masks/ct-*.toml):
//   kind        = "ct-views"            (required)
//   description = "..."                 (optional)
//   views       = 60                    (required unless `file`)
//   arc_deg     = 180.0                 (default 180)
//   start_deg   = 0.0                   (default 0)
//   order       = "sequential"|"golden" (default sequential)
//   file        = "angles.txt"          (optional; relative to the TOML file)
//   geometry    = "parallel"|"fan"      (optional; the CLI uses it as --geometry)
// Unknown keys are errors (file, line, key).
struct CtProtocol {
  ViewSetSpec views;
  std::string description;
  std::optional<CtBeam> beam;  // `geometry`, when given
};
CtProtocol load_ct_protocol(const std::string& path);

}  // namespace recofold
