// SPDX-License-Identifier: Apache-2.0
// Private: a strict check of a MetaImage (.mha) text header, run before ITK's
// MetaIO parses it. MetaIO keeps NDims-sized arrays of fixed capacity and
// trusts the header's counts, so a malformed header can overwrite its heap;
// only headers of the subset below ever reach it.
#pragma once

#include <string>

namespace recofold::internal {

// The header lines of `path` up to and including "ElementDataFile = LOCAL",
// checked: at most 256 lines of at most 1024 bytes, no NUL byte, each
// "Key = value" with a key of letters, digits and '_', each key once;
// NDims 2 or 3 and before every array field; DimSize (NDims positive integers,
// each at most kMaxAxisLength), the spacing/offset/matrix fields (exactly the
// NDims or NDims x NDims finite numbers), ElementType a known scalar MET_ type,
// ElementNumberOfChannels 1 to 4, the yes/no fields True or False, ElementDataFile
// LOCAL and last, HeaderSize absent or 0/-1. Throws InputError(path, key, what
// was expected, line) at the first offence. The length of the pixel data is
// checked against the header afterwards (itk_bridge.cc).
void check_metaimage_header(const std::string& path);

}  // namespace recofold::internal
