// SPDX-License-Identifier: Apache-2.0
// Version, build and provenance records written into every output.
#pragma once

#include <cstdint>
#include <map>
#include <string>

namespace recofold {

// "0.1.0"
const char* version();
// Git revision the binary was configured from ("unknown" outside a checkout).
const char* git_revision();
// CMake build type ("Release", "Debug", ...).
const char* build_type();
// "recofold 0.1.0 (git abc1234, Release)"
std::string producer_string();

// The line every report and the CLI help carry (SAFETY.md).
constexpr const char* kResearchUseLine =
    "For research use only: not for diagnosis or treatment (see SAFETY.md).";

// What made an output: written to /provenance of every HDF5 file.
struct Provenance {
  std::string producer = producer_string();
  std::string command;  // the full command line, or the config text that made it
  std::string created_utc = utc_timestamp();
  std::map<std::string, std::string> extra;  // seeds, input checksums, config text, ...

  static std::string utc_timestamp();  // "2026-12-01T23:06:56Z"
};

// FNV-1a 64-bit checksum of a file's bytes, as 16 hex digits (for provenance).
std::string file_checksum(const std::string& path);

}  // namespace recofold
