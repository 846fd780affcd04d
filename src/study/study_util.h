// SPDX-License-Identifier: Apache-2.0
// Small helpers shared by the study sources: CSV fields, base64, HTML escaping (private).
#pragma once

#include <cstdint>
#include <string>
#include <vector>

// Hashing and number text come from core (core/hash.h, core/number_format.h).
#include "recofold/core/hash.h"
#include "recofold/core/measurement.h"
#include "recofold/core/number_format.h"

namespace recofold {

// CSV: quote a field when it holds a comma, quote or newline; split one line.
std::string csv_field(const std::string& s);
std::vector<std::string> csv_split(const std::string& line);

// Standard base64 (RFC 4648) of bytes, for images embedded in the report.
std::string base64(const std::string& bytes);

// Modalities in messages: "MRI", "CT", "denoising", "inpainting", and with
// the article: "an MRI", "a CT", "a denoising", "an inpainting".
std::string modality_label(Modality m);
std::string modality_phrase(Modality m);

// HTML text escaping (& < > ").
std::string html_escape(const std::string& s);

}  // namespace recofold
