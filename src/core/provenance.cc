// SPDX-License-Identifier: Apache-2.0
// Provenance helpers.
#include "recofold/core/provenance.h"

#include <cstdio>
#include <ctime>
#include <fstream>

#include "recofold/core/error.h"

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
  uint64_t h = 0xcbf29ce484222325ULL;
  char buf[1 << 16];
  while (in) {
    in.read(buf, sizeof buf);
    for (std::streamsize i = 0; i < in.gcount(); ++i) {
      h ^= static_cast<unsigned char>(buf[i]);
      h *= 0x100000001b3ULL;
    }
  }
  char out[17];
  std::snprintf(out, sizeof out, "%016llx", static_cast<unsigned long long>(h));
  return out;
}

}  // namespace recofold
