// SPDX-License-Identifier: Apache-2.0
// Line plots written as SVG text (private to the study report).
#pragma once

#include <string>
#include <vector>

namespace recofold {

struct PlotSeries {
  std::string name;
  std::vector<double> x, y;    // same length; NaN y values are gaps
  std::vector<bool> marked;    // optional, same length: ring the point (inside training conditions)
  bool dashed = false;
};

struct LinePlot {
  std::string title, x_label, y_label;
  std::vector<PlotSeries> series;
  std::string marked_label = "inside training conditions";
  int width = 560, height = 340;
};

// A standalone <svg> element (also valid as an .svg file) with axes, ticks,
// grid lines, one coloured polyline with markers per series, and a legend.
std::string svg_line_plot(const LinePlot& plot);

// The colour of series i (a fixed palette that stays apart in print and for
// common colour-vision deficiencies).
std::string series_colour(size_t i);

}  // namespace recofold
