// SPDX-License-Identifier: Apache-2.0
// PNG import with libpng (the only translation unit that includes png.h).
// libpng reports errors by calling its error function, which must not return:
// ours records the message and jumps back (png_longjmp) into the small C-style
// functions below, which hold no C++ objects between setjmp and the jump.
#include "png_reader.h"

#include <png.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <memory>
#include <vector>

#include "recofold/core/checks.h"
#include "recofold/core/error.h"

namespace recofold::internal {

namespace {

struct ErrorText {
  char text[200] = {0};
};

[[noreturn]] void on_png_error(png_structp png, png_const_charp msg) {
  auto* e = static_cast<ErrorText*>(png_get_error_ptr(png));
  if (e) std::snprintf(e->text, sizeof e->text, "%s", msg ? msg : "libpng gave no reason");
  png_longjmp(png, 1);
}

void on_png_warning(png_structp, png_const_charp) {}  // library code never prints

// What the header declares, after the transformations below.
struct PngHeader {
  png_uint_32 width = 0, height = 0;
  int bit_depth = 0;   // 8 or 16 after expansion
  int channels = 0;    // 1 grey, 2 grey+alpha, 3 RGB, 4 RGBA
  size_t row_bytes = 0;
  double spacing[2] = {1.0, 1.0};
};

// Reads the chunks up to the image data and sets up the transformations ITK's
// reader used; false on a libpng error (message in the ErrorText).
bool read_header(png_structp png, png_infop info, PngHeader* h) {
  if (setjmp(png_jmpbuf(png))) return false;
  png_read_info(png, info);
  const int colour = png_get_color_type(png, info);
  const int depth = png_get_bit_depth(png, info);
  if (colour == PNG_COLOR_TYPE_PALETTE) png_set_palette_to_rgb(png);
  if (colour == PNG_COLOR_TYPE_GRAY && depth < 8) png_set_expand_gray_1_2_4_to_8(png);
  if (png_get_valid(png, info, PNG_INFO_tRNS)) png_set_tRNS_to_alpha(png);
  png_set_interlace_handling(png);
  png_read_update_info(png, info);
  h->width = png_get_image_width(png, info);
  h->height = png_get_image_height(png, info);
  h->bit_depth = png_get_bit_depth(png, info);
  h->channels = png_get_channels(png, info);
  h->row_bytes = png_get_rowbytes(png, info);
  int unit = 0;
  double sx = 0, sy = 0;
  if (png_get_sCAL(png, info, &unit, &sx, &sy) != 0) {
    if (std::isfinite(sx) && sx > 0) h->spacing[0] = sx;
    if (std::isfinite(sy) && sy > 0) h->spacing[1] = sy;
  }
  return true;
}

// Decodes every row (all interlace passes) and the chunks after the data.
bool read_rows(png_structp png, png_infop info, png_bytepp rows) {
  if (setjmp(png_jmpbuf(png))) return false;
  png_read_image(png, rows);
  png_read_end(png, info);
  return true;
}

struct ReadStruct {
  png_structp png = nullptr;
  png_infop info = nullptr;
  ~ReadStruct() {
    if (png) png_destroy_read_struct(&png, info ? &info : nullptr, nullptr);
  }
};

struct FileCloser {
  void operator()(std::FILE* f) const { std::fclose(f); }
};

double sample(const unsigned char* p, int bit_depth) {
  return bit_depth == 16 ? static_cast<double>((p[0] << 8) | p[1]) : static_cast<double>(p[0]);
}

// One pixel as grey: ITK's conversion (itk::ConvertPixelBuffer) of RGB and RGBA.
float grey_value(const unsigned char* p, int channels, int bit_depth) {
  const int step = bit_depth == 16 ? 2 : 1;
  if (channels == 1) return static_cast<float>(sample(p, bit_depth));
  const double lum =
      (2125.0 * sample(p, bit_depth) + 7154.0 * sample(p + step, bit_depth) + 721.0 * sample(p + 2 * step, bit_depth)) /
      10000.0;
  if (channels == 3) return static_cast<float>(lum);
  const double max_alpha = bit_depth == 16 ? 65535.0 : 255.0;
  return static_cast<float>(lum * sample(p + 3 * step, bit_depth) / max_alpha);
}

}  // namespace

PlainImage png_read(const std::string& path, const HeaderCheck& check) {
  std::unique_ptr<std::FILE, FileCloser> f(std::fopen(path.c_str(), "rb"));
  if (!f) throw InputError(path, "", "cannot be opened");
  unsigned char sig[8];
  if (std::fread(sig, 1, 8, f.get()) != 8 || png_sig_cmp(sig, 0, 8) != 0)
    throw InputError(path, "", "is not a readable .png file (no PNG signature)");
  ErrorText err;
  ReadStruct rs;
  rs.png = png_create_read_struct(PNG_LIBPNG_VER_STRING, &err, on_png_error, on_png_warning);
  if (!rs.png) throw InputError(path, "", "cannot read PNG: libpng could not start");
  rs.info = png_create_info_struct(rs.png);
  if (!rs.info) throw InputError(path, "", "cannot read PNG: libpng could not start");
  // Header sizes beyond recofold's axis limit are refused by libpng itself,
  // and ancillary chunks (text, ICC profiles) are bounded.
  const auto axis_limit = static_cast<png_uint_32>(std::min<Index>(kMaxAxisLength, PNG_UINT_31_MAX));
  png_set_user_limits(rs.png, axis_limit, axis_limit);
  png_set_chunk_cache_max(rs.png, 128);
  png_set_chunk_malloc_max(rs.png, png_alloc_size_t{8} << 20);
  // libpng only warns about some corrupt chunks ("benign" errors: a chunk
  // longer than the limit above is then allocated anyway): refuse them.
  png_set_benign_errors(rs.png, 0);
  png_init_io(rs.png, f.get());
  png_set_sig_bytes(rs.png, 8);
  PngHeader h;
  if (!read_header(rs.png, rs.info, &h)) throw InputError(path, "", std::string("cannot read PNG: ") + err.text);
  if (h.channels == 2)
    throw InputError(path, "", "has grey + alpha pixels (2 components); expected grey, RGB or RGBA values");
  if ((h.channels != 1 && h.channels != 3 && h.channels != 4) || (h.bit_depth != 8 && h.bit_depth != 16) ||
      h.row_bytes != static_cast<size_t>(h.width) * static_cast<size_t>(h.channels * h.bit_depth / 8))
    throw InputError(path, "", "has an unsupported PNG pixel layout (" + std::to_string(h.channels) + " channels, " +
                                   std::to_string(h.bit_depth) + " bits)");
  const std::vector<size_t> size = {h.width, h.height};
  if (check) check(size, static_cast<unsigned>(h.channels), static_cast<size_t>(h.bit_depth / 8));
  std::vector<unsigned char> buf(h.row_bytes * h.height);
  std::vector<png_bytep> rows(h.height);
  for (png_uint_32 y = 0; y < h.height; ++y) rows[y] = buf.data() + y * h.row_bytes;
  if (!read_rows(rs.png, rs.info, rows.data()))
    throw InputError(path, "", std::string("cannot read PNG (truncated or corrupt file): ") + err.text);
  PlainImage out;
  out.size = size;
  out.spacing = {h.spacing[0], h.spacing[1]};
  out.values.resize(static_cast<size_t>(h.width) * h.height);
  const size_t px_bytes = static_cast<size_t>(h.channels * h.bit_depth / 8);
  for (size_t i = 0; i < out.values.size(); ++i) out.values[i] = grey_value(buf.data() + i * px_bytes, h.channels, h.bit_depth);
  return out;
}

}  // namespace recofold::internal
