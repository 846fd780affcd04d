// SPDX-License-Identifier: Apache-2.0
// PNG line plots: a small rasteriser (lines, discs, rings, digit font) and a stored-deflate PNG encoder.
#include "png_plot.h"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <limits>
#include <vector>

#include "recofold/core/atomic_file.h"
#include "study_util.h"

namespace recofold {

namespace {

struct Rgb {
  uint8_t r, g, b;
};

Rgb parse_colour(const std::string& hex) {
  auto h = [&](size_t i) { return uint8_t(std::strtoul(hex.substr(i, 2).c_str(), nullptr, 16)); };
  return {h(1), h(3), h(5)};
}

class Canvas {
 public:
  Canvas(int w, int h) : w_(w), h_(h), px_(size_t(w) * size_t(h) * 3, char(255)) {}
  void dot(int x, int y, Rgb c) {
    if (x < 0 || y < 0 || x >= w_ || y >= h_) return;
    const size_t k = (size_t(y) * size_t(w_) + size_t(x)) * 3;
    px_[k] = char(c.r);
    px_[k + 1] = char(c.g);
    px_[k + 2] = char(c.b);
  }
  // Line of the given width (a square brush along Bresenham's path).
  void line(double x0, double y0, double x1, double y1, Rgb c, int width = 1) {
    const int steps = int(std::max(std::fabs(x1 - x0), std::fabs(y1 - y0))) + 1;
    for (int i = 0; i <= steps; ++i) {
      const double t = double(i) / steps;
      const int x = int(std::lround(x0 + t * (x1 - x0))), y = int(std::lround(y0 + t * (y1 - y0)));
      for (int dy = 0; dy < width; ++dy)
        for (int dx = 0; dx < width; ++dx) dot(x + dx - width / 2, y + dy - width / 2, c);
    }
  }
  void disc(double cx, double cy, double r, Rgb c) {
    for (int y = int(cy - r) - 1; y <= int(cy + r) + 1; ++y)
      for (int x = int(cx - r) - 1; x <= int(cx + r) + 1; ++x)
        if ((x - cx) * (x - cx) + (y - cy) * (y - cy) <= r * r) dot(x, y, c);
  }
  void ring(double cx, double cy, double r, Rgb c) {
    for (int y = int(cy - r) - 2; y <= int(cy + r) + 2; ++y)
      for (int x = int(cx - r) - 2; x <= int(cx + r) + 2; ++x) {
        const double d = std::sqrt((x - cx) * (x - cx) + (y - cy) * (y - cy));
        if (std::fabs(d - r) <= 0.8) dot(x, y, c);
      }
  }
  // Text in a 3x5 font scaled by `scale` (digits, '.', '-', '+', 'e', capital letters and some
  // punctuation; other characters are blank); x is the left edge.
  int text(int x, int y, const std::string& s, Rgb c, int scale = 2) {
    for (char ch : s) {
      const uint16_t g = glyph(ch);
      for (int row = 0; row < 5; ++row)
        for (int col = 0; col < 3; ++col)
          if (g & (1u << (14 - (row * 3 + col))))
            for (int dy = 0; dy < scale; ++dy)
              for (int dx = 0; dx < scale; ++dx) dot(x + col * scale + dx, y + row * scale + dy, c);
      x += 4 * scale;
    }
    return x;
  }
  static int text_width(const std::string& s, int scale = 2) { return int(s.size()) * 4 * scale - scale; }
  const std::string& pixels() const { return px_; }

 private:
  static uint16_t glyph(char ch) {
    // 15 bits, rows top to bottom, 3 columns each, most significant bit first.
    switch (ch) {
      case '0': return 0b111101101101111;
      case '1': return 0b010110010010111;
      case '2': return 0b111001111100111;
      case '3': return 0b111001111001111;
      case '4': return 0b101101111001001;
      case '5': return 0b111100111001111;
      case '6': return 0b111100111101111;
      case '7': return 0b111001001001001;
      case '8': return 0b111101111101111;
      case '9': return 0b111101111001111;
      case '.': return 0b000000000000010;
      case '-': return 0b000000111000000;
      case '+': return 0b000010111010000;
      case 'e': return 0b000111111100111;
      // Capital letters and punctuation for titles and axis labels (label_text upper-cases them).
      case 'A': return 0b010101111101101;
      case 'B': return 0b110101110101110;
      case 'C': return 0b011100100100011;
      case 'D': return 0b110101101101110;
      case 'E': return 0b111100110100111;
      case 'F': return 0b111100110100100;
      case 'G': return 0b011100101101011;
      case 'H': return 0b101101111101101;
      case 'I': return 0b111010010010111;
      case 'J': return 0b001001001101010;
      case 'K': return 0b101101110101101;
      case 'L': return 0b100100100100111;
      case 'M': return 0b101111111101101;
      case 'N': return 0b110101101101101;
      case 'O': return 0b010101101101010;
      case 'P': return 0b110101110100100;
      case 'Q': return 0b010101101110011;
      case 'R': return 0b110101110101101;
      case 'S': return 0b011100010001110;
      case 'T': return 0b111010010010010;
      case 'U': return 0b101101101101111;
      case 'V': return 0b101101101101010;
      case 'W': return 0b101101111111101;
      case 'X': return 0b101101010101101;
      case 'Y': return 0b101101010010010;
      case 'Z': return 0b111001010100111;
      case '(': return 0b010100100100010;
      case ')': return 0b010001001001010;
      case '/': return 0b001001010100100;
      case ':': return 0b000010000010000;
      case ',': return 0b000000000010100;
      case '%': return 0b101001010100101;
      case '=': return 0b000111000111000;
      case '_': return 0b000000000000111;
      case '[': return 0b110100100100110;
      case ']': return 0b011001001001011;
      case '\'': return 0b010010000000000;
      case '>': return 0b100010001010100;
      case '<': return 0b001010100010001;
      case '|': return 0b010010010010010;
      default: return 0;
    }
  }
  int w_, h_;
  std::string px_;
};

uint32_t crc32(const std::string& bytes) {
  static uint32_t table[256];
  static bool ready = false;
  if (!ready) {
    for (uint32_t n = 0; n < 256; ++n) {
      uint32_t c = n;
      for (int k = 0; k < 8; ++k) c = (c & 1) ? 0xEDB88320u ^ (c >> 1) : c >> 1;
      table[n] = c;
    }
    ready = true;
  }
  uint32_t c = 0xFFFFFFFFu;
  for (unsigned char b : bytes) c = table[(c ^ b) & 0xFF] ^ (c >> 8);
  return c ^ 0xFFFFFFFFu;
}

void put32(std::string& s, uint32_t v) {
  s += char((v >> 24) & 0xFF);
  s += char((v >> 16) & 0xFF);
  s += char((v >> 8) & 0xFF);
  s += char(v & 0xFF);
}

void chunk(std::string& png, const std::string& type, const std::string& data) {
  put32(png, uint32_t(data.size()));
  const std::string body = type + data;
  png += body;
  put32(png, crc32(body));
}

// A title or label for the 3x5 font: capitals; Greek lambda and arrows spelled out.
std::string label_text(const std::string& s) {
  std::string out;
  for (size_t i = 0; i < s.size(); ++i) {
    const unsigned char ch = static_cast<unsigned char>(s[i]);
    if (s.compare(i, 2, "\xce\xbb") == 0) {  // U+03BB lambda
      out += "LAMBDA";
      ++i;
    } else if (s.compare(i, 3, "\xe2\x86\x92") == 0) {  // U+2192 arrow
      out += "->";
      i += 2;
    } else if (ch >= 0x80) {
      out += ' ';
    } else {
      out += static_cast<char>(std::toupper(ch));
    }
  }
  return out;
}

std::vector<double> ticks(double lo, double hi) {
  const double span = hi - lo;
  if (!(span > 0)) return {lo};
  const double raw = span / 5, mag = std::pow(10.0, std::floor(std::log10(raw)));
  double step = mag;
  for (double f : {1.0, 2.0, 2.5, 5.0, 10.0})
    if (raw <= f * mag) {
      step = f * mag;
      break;
    }
  std::vector<double> t;
  for (double v = std::ceil(lo / step - 1e-9) * step; v <= hi + 1e-9 * span; v += step)
    t.push_back(std::fabs(v) < 1e-12 * step ? 0.0 : v);
  return t;
}

}  // namespace

std::string encode_png_rgb(int width, int height, const std::string& rgb) {
  std::string raw;
  raw.reserve(size_t(height) * (size_t(width) * 3 + 1));
  for (int y = 0; y < height; ++y) {
    raw += char(0);  // filter: none
    raw.append(rgb, size_t(y) * size_t(width) * 3, size_t(width) * 3);
  }
  // zlib stream of stored (uncompressed) deflate blocks.
  std::string z = {char(0x78), char(0x01)};
  for (size_t pos = 0; pos < raw.size() || pos == 0;) {
    const size_t n = std::min<size_t>(65535, raw.size() - pos);
    const bool last = pos + n >= raw.size();
    z += char(last ? 1 : 0);
    z += char(n & 0xFF);
    z += char((n >> 8) & 0xFF);
    z += char(~n & 0xFF);
    z += char((~n >> 8) & 0xFF);
    z.append(raw, pos, n);
    pos += n;
    if (last) break;
  }
  uint32_t a = 1, b = 0;
  for (unsigned char c : raw) {
    a = (a + c) % 65521;
    b = (b + a) % 65521;
  }
  put32(z, (b << 16) | a);
  std::string png = "\x89PNG\r\n\x1a\n";
  std::string ihdr;
  put32(ihdr, uint32_t(width));
  put32(ihdr, uint32_t(height));
  ihdr += char(8);  // bit depth
  ihdr += char(2);  // colour type: RGB
  ihdr += std::string(3, char(0));  // compression, filter, interlace
  chunk(png, "IHDR", ihdr);
  chunk(png, "IDAT", z);
  chunk(png, "IEND", "");
  return png;
}

void write_png_plot(const std::string& path, const LinePlot& p) {
  const int w = p.width, h = p.height;
  // Title at the top, the y label above the plot area, the x label under the tick labels.
  const double left = 70, right = 60, top = 44, bottom = 46;
  const double pw = w - left - right, ph = h - top - bottom;
  Canvas cv(w, h);
  double xmin = std::numeric_limits<double>::infinity(), xmax = -xmin, ymin = xmin, ymax = -xmin;
  std::vector<double> xs;
  for (const auto& s : p.series)
    for (size_t i = 0; i < s.x.size(); ++i)
      if (std::isfinite(s.y[i]) && std::isfinite(s.x[i])) {
        xmin = std::min(xmin, s.x[i]);
        xmax = std::max(xmax, s.x[i]);
        ymin = std::min(ymin, s.y[i]);
        ymax = std::max(ymax, s.y[i]);
        xs.push_back(s.x[i]);
      }
  const Rgb grey{221, 221, 221}, dark{51, 51, 51};
  if (!xs.empty()) {
    if (xmax == xmin) {
      xmin -= 0.5;
      xmax += 0.5;
    }
    const double ypad = ymax > ymin ? 0.08 * (ymax - ymin) : std::max(1e-3, 0.05 * std::fabs(ymax));
    ymin -= ypad;
    ymax += ypad;
    const double xpad = 0.05 * (xmax - xmin);
    xmin -= xpad;
    xmax += xpad;
    auto X = [&](double x) { return left + (x - xmin) / (xmax - xmin) * pw; };
    auto Y = [&](double y) { return top + (1.0 - (y - ymin) / (ymax - ymin)) * ph; };
    for (double t : ticks(ymin, ymax)) {
      cv.line(left, Y(t), left + pw, Y(t), grey);
      const std::string s = format_sig(t, 4);
      cv.text(int(left) - 6 - Canvas::text_width(s), int(Y(t)) - 5, s, dark);
    }
    std::sort(xs.begin(), xs.end());
    xs.erase(std::unique(xs.begin(), xs.end()), xs.end());
    for (double t : xs) {
      cv.line(X(t), top, X(t), top + ph, grey);
      const std::string s = format_sig(t, 4);
      cv.text(int(X(t)) - Canvas::text_width(s) / 2, int(top + ph) + 8, s, dark);
    }
    for (size_t si = 0; si < p.series.size(); ++si) {
      const PlotSeries& s = p.series[si];
      const Rgb c = parse_colour(series_colour(si));
      double px = std::nan(""), py = std::nan("");
      for (size_t i = 0; i < s.x.size(); ++i) {
        if (!std::isfinite(s.y[i])) continue;
        const double x = X(s.x[i]), y = Y(s.y[i]);
        if (std::isfinite(px)) cv.line(px, py, x, y, c, 2);
        px = x;
        py = y;
      }
      for (size_t i = 0; i < s.x.size(); ++i) {
        if (!std::isfinite(s.y[i])) continue;
        cv.disc(X(s.x[i]), Y(s.y[i]), 3.5, c);
        if (i < s.marked.size() && s.marked[i]) cv.ring(X(s.x[i]), Y(s.y[i]), 8, c);
      }
      // Legend: numbered swatches in series order.
      const int ly = int(top) + 6 + 18 * int(si);
      cv.line(left + pw + 10, ly + 5, left + pw + 28, ly + 5, c, 3);
      cv.text(int(left + pw) + 34, ly, std::to_string(si + 1), dark);
    }
  }
  const std::string title = label_text(p.title), xl = label_text(p.x_label), yl = label_text(p.y_label);
  cv.text(std::max(2, (w - Canvas::text_width(title)) / 2), 6, title, dark);
  cv.text(4, int(top) - 16, yl, dark);
  cv.text(int(left + pw / 2) - Canvas::text_width(xl) / 2, int(top + ph) + 26, xl, dark);
  cv.line(left, top, left + pw, top, dark);
  cv.line(left, top + ph, left + pw, top + ph, dark);
  cv.line(left, top, left, top + ph, dark);
  cv.line(left + pw, top, left + pw, top + ph, dark);
  write_text_atomic(path, encode_png_rgb(w, h, cv.pixels()));
}

}  // namespace recofold
