// SPDX-License-Identifier: Apache-2.0
// Private: PNG import with the system libpng (png_reader.cc is the only file
// that includes png.h). Replaces ITK's PNG reader, which lets libpng abort the
// process on a corrupt chunk (png_error without a jump buffer).
#pragma once

#include <string>

#include "itk_bridge.h"

namespace recofold::internal {

// Reads a PNG file as float grey values in ITK order (x fastest, row 0 of
// the file first), as ITK's PNG reader did: grey 1/2/4/8 bits -> 0..255,
// 16 bits -> 0..65535, palettes expanded to RGB, a tRNS chunk to alpha;
// RGB -> luminance (0.2125 R + 0.7154 G + 0.0721 B), RGBA -> that luminance
// times alpha / maximum; grey + alpha is refused. Spacing from an sCAL chunk
// (finite positive values), 1 otherwise. The header (width, height, bit
// depth, colour type) is checked and `check` called before any pixel is
// allocated; every libpng error (corrupt chunk, bad CRC of a critical chunk,
// truncated data) is caught with libpng's jump buffer. Throws InputError
// naming `path` with one line.
PlainImage png_read(const std::string& path, const HeaderCheck& check = {});

}  // namespace recofold::internal
