// SPDX-License-Identifier: Apache-2.0
// Provenance helpers.
#include "recofold/core/provenance.h"

#include <cstdio>
#include <ctime>
#include <fstream>

#include "recofold/core/error.h"
#include "recofold/core/hash.h"

namespace recofold {

std::string producer_string() {
  return std::string("recofold ") + version() + " (git " + git_revision() + ", " + build_type() + ")";
}

std::string Provenance::utc_timestamp() {
  std::time_t t = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&t, &tm);
  char buf[32];
  std::strftime(buf, sizeof buf, "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buf;
}

std::string file_checksum(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path, "", "cannot open file for checksum");
  uint64_t h = kFnv1aOffsetBasis;
  char buf[1 << 16];
  while (in) {
    in.read(buf, sizeof buf);
    h = fnv1a(buf, static_cast<size_t>(in.gcount()), h);
  }
  return hex16(h);
}

}  // namespace recofold
