// SPDX-License-Identifier: Apache-2.0
// Raster (PNG) copies of the report's line plots, written without any imaging library (private).
#pragma once

#include <string>

#include "svg_plot.h"

namespace recofold {

// Draws `plot` into an RGB raster of plot.width x plot.height: frame, grid,
// one coloured line with markers per series (the SVG's palette), rings on
// marked points, numeric tick labels in a built-in 3x5 digit font, and a
// legend of colour swatches numbered 1..n in series order (the report's
// caption names them). Writes an 8-bit RGB PNG atomically (stored deflate
// blocks: no compression library). WorkError on I/O failure.
void write_png_plot(const std::string& path, const LinePlot& plot);

// The PNG bytes of an RGB image (rgb: width * height * 3 bytes, rows top first).
std::string encode_png_rgb(int width, int height, const std::string& rgb);

}  // namespace recofold
