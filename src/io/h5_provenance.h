// SPDX-License-Identifier: Apache-2.0
// Private helpers shared by the image and measurement files: /provenance and number/text maps.
#pragma once

#include <map>
#include <string>

#include "recofold/core/provenance.h"
#include "recofold/io/h5_file.h"

namespace recofold::internal {

// Writes group /provenance with attrs producer, command, created_utc and every extra entry.
void write_provenance_group(H5Writer& w, const Provenance& prov);

// Reads /provenance (an empty record, with empty producer/created_utc, when absent).
Provenance read_provenance_group(const H5Reader& r);

// Writes each map entry as an attribute of `object`.
void write_attr_maps(H5Writer& w, const std::string& object, const std::map<std::string, double>& numbers,
                     const std::map<std::string, std::string>& texts);

}  // namespace recofold::internal
