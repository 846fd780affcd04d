// SPDX-License-Identifier: Apache-2.0
// SVG line plots for the study report.
#include "svg_plot.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>

#include "study_util.h"

namespace recofold {

namespace {

std::string num(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.1f", v);
  return buf;
}

// About `count` round tick values covering [lo, hi].
std::vector<double> nice_ticks(double lo, double hi, int count) {
  std::vector<double> t;
  const double span = hi - lo;
  if (!(span > 0.0)) return {lo};
  const double raw = span / count;
  const double mag = std::pow(10.0, std::floor(std::log10(raw)));
  double step = mag;
  for (double f : {1.0, 2.0, 2.5, 5.0, 10.0})
    if (raw <= f * mag) {
      step = f * mag;
      break;
    }
  for (double v = std::ceil(lo / step - 1e-9) * step; v <= hi + 1e-9 * span; v += step)
    t.push_back(std::fabs(v) < 1e-12 * step ? 0.0 : v);
  return t;
}

}  // namespace

std::string series_colour(size_t i) {
  static const char* palette[] = {"#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000", "#F0E442"};
  return palette[i % 8];
}

namespace {

// The plot area and the data window it shows.
struct PlotFrame {
  double left = 0, top = 0, pw = 0, ph = 0, h = 0;
  double xmin = 0, xmax = 0, ymin = 0, ymax = 0;
  double X(double x) const { return left + (x - xmin) / (xmax - xmin) * pw; }
  double Y(double y) const { return top + (1.0 - (y - ymin) / (ymax - ymin)) * ph; }
};

// Grid lines, tick labels (every distinct x), the frame and the axis labels.
void svg_axes(std::string& o, const PlotFrame& f, std::vector<double> xs, const LinePlot& p) {
  for (double t : nice_ticks(f.ymin, f.ymax, 5)) {
    o += "<line x1=\"" + num(f.left) + "\" x2=\"" + num(f.left + f.pw) + "\" y1=\"" + num(f.Y(t)) + "\" y2=\"" +
         num(f.Y(t)) + "\" stroke=\"#dddddd\"/>\n";
    o += "<text x=\"" + num(f.left - 6) + "\" y=\"" + num(f.Y(t) + 4) + "\" text-anchor=\"end\">" + format_sig(t, 4) +
         "</text>\n";
  }
  std::sort(xs.begin(), xs.end());
  xs.erase(std::unique(xs.begin(), xs.end()), xs.end());
  for (double t : xs) {
    o += "<line x1=\"" + num(f.X(t)) + "\" x2=\"" + num(f.X(t)) + "\" y1=\"" + num(f.top) + "\" y2=\"" +
         num(f.top + f.ph) + "\" stroke=\"#eeeeee\"/>\n";
    o += "<text x=\"" + num(f.X(t)) + "\" y=\"" + num(f.top + f.ph + 16) + "\" text-anchor=\"middle\">" +
         format_sig(t, 4) + "</text>\n";
  }
  o += "<rect x=\"" + num(f.left) + "\" y=\"" + num(f.top) + "\" width=\"" + num(f.pw) + "\" height=\"" + num(f.ph) +
       "\" fill=\"none\" stroke=\"#333333\"/>\n";
  o += "<text x=\"" + num(f.left + f.pw / 2) + "\" y=\"" + num(f.h - 10) + "\" text-anchor=\"middle\">" +
       html_escape(p.x_label) + "</text>\n";
  o += "<text transform=\"translate(16," + num(f.top + f.ph / 2) + ") rotate(-90)\" text-anchor=\"middle\">" +
       html_escape(p.y_label) + "</text>\n";
}

// Each series' line, points, rings of marked points and legend entry, then the ring's legend entry.
void svg_series(std::string& o, const PlotFrame& f, const LinePlot& p) {
  bool any_marked = false;
  for (size_t si = 0; si < p.series.size(); ++si) {
    const PlotSeries& s = p.series[si];
    const std::string c = series_colour(si);
    std::string pts;
    for (size_t i = 0; i < s.x.size(); ++i) {
      if (!std::isfinite(s.y[i])) continue;
      pts += num(f.X(s.x[i])) + "," + num(f.Y(s.y[i])) + " ";
    }
    o += "<polyline fill=\"none\" stroke=\"" + c + "\" stroke-width=\"2\"" +
         (s.dashed ? std::string(" stroke-dasharray=\"6 4\"") : std::string()) + " points=\"" + pts + "\"/>\n";
    for (size_t i = 0; i < s.x.size(); ++i) {
      if (!std::isfinite(s.y[i])) continue;
      o += "<circle cx=\"" + num(f.X(s.x[i])) + "\" cy=\"" + num(f.Y(s.y[i])) + "\" r=\"3.5\" fill=\"" + c + "\"/>\n";
      if (i < s.marked.size() && s.marked[i]) {
        any_marked = true;
        o += "<circle cx=\"" + num(f.X(s.x[i])) + "\" cy=\"" + num(f.Y(s.y[i])) + "\" r=\"8\" fill=\"none\" stroke=\"" +
             c + "\" stroke-width=\"1.5\"/>\n";
      }
    }
    const double ly = f.top + 8 + 18.0 * double(si), lx = f.left + f.pw;
    o += "<line x1=\"" + num(lx + 12) + "\" x2=\"" + num(lx + 34) + "\" y1=\"" + num(ly) + "\" y2=\"" + num(ly) +
         "\" stroke=\"" + c + "\" stroke-width=\"2\"" +
         (s.dashed ? std::string(" stroke-dasharray=\"6 4\"") : std::string()) + "/>\n";
    o += "<text x=\"" + num(lx + 40) + "\" y=\"" + num(ly + 4) + "\">" + html_escape(s.name) + "</text>\n";
  }
  if (any_marked) {
    const double ly = f.top + 8 + 18.0 * double(p.series.size()) + 6;
    o += "<circle cx=\"" + num(f.left + f.pw + 23) + "\" cy=\"" + num(ly) +
         "\" r=\"7\" fill=\"none\" stroke=\"#333333\" stroke-width=\"1.5\"/>\n";
    o += "<text x=\"" + num(f.left + f.pw + 40) + "\" y=\"" + num(ly + 4) + "\" font-size=\"11\">" +
         html_escape(p.marked_label) + "</text>\n";
  }
}

}  // namespace

std::string svg_line_plot(const LinePlot& p) {
  // The legend column is as wide as its longest label (about 0.62 em per
  // character at the 13 px default font, 11 px for the ring label), so no
  // legend text is clipped; the plot area keeps its width.
  size_t longest = 0;
  for (const auto& s : p.series) longest = std::max(longest, s.name.size());
  const double legend_w = std::max(40.0 + 8.1 * double(longest), 40.0 + 6.9 * double(p.marked_label.size())) + 12.0;
  const double right = std::max(170.0, legend_w), bottom = 48;
  PlotFrame f;
  f.left = 64;
  f.top = 34;
  const double w = double(p.width) - 170.0 + right;
  f.h = p.height;
  f.pw = w - f.left - right;
  f.ph = f.h - f.top - bottom;
  const int width_px = int(std::ceil(w));
  double xmin = std::numeric_limits<double>::infinity(), xmax = -xmin, ymin = xmin, ymax = -xmin;
  std::vector<double> xs;
  for (const auto& s : p.series)
    for (size_t i = 0; i < s.x.size(); ++i) {
      if (!std::isfinite(s.y[i]) || !std::isfinite(s.x[i])) continue;
      xmin = std::min(xmin, s.x[i]);
      xmax = std::max(xmax, s.x[i]);
      ymin = std::min(ymin, s.y[i]);
      ymax = std::max(ymax, s.y[i]);
      xs.push_back(s.x[i]);
    }
  std::string o = "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"" + std::to_string(width_px) + "\" height=\"" +
                  std::to_string(p.height) + "\" viewBox=\"0 0 " + std::to_string(width_px) + " " +
                  std::to_string(p.height) + "\" font-family=\"sans-serif\" font-size=\"12\">\n";
  o += "<rect x=\"0\" y=\"0\" width=\"" + num(w) + "\" height=\"" + num(f.h) + "\" fill=\"white\"/>\n";
  o += "<text x=\"" + num(f.left + f.pw / 2) + "\" y=\"20\" text-anchor=\"middle\" font-size=\"14\">" +
       html_escape(p.title) + "</text>\n";
  if (xs.empty()) {
    o += "<text x=\"" + num(f.left + f.pw / 2) + "\" y=\"" + num(f.top + f.ph / 2) +
         "\" text-anchor=\"middle\">no successful cases</text>\n</svg>\n";
    return o;
  }
  if (xmax == xmin) {
    xmin -= 0.5;
    xmax += 0.5;
  }
  const double ypad = ymax > ymin ? 0.08 * (ymax - ymin) : std::max(1e-3, 0.05 * std::fabs(ymax));
  const double xpad = 0.05 * (xmax - xmin);
  f.xmin = xmin - xpad;
  f.xmax = xmax + xpad;
  f.ymin = ymin - ypad;
  f.ymax = ymax + ypad;
  svg_axes(o, f, std::move(xs), p);
  svg_series(o, f, p);
  o += "</svg>\n";
  return o;
}

}  // namespace recofold
