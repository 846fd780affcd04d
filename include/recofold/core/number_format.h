// SPDX-License-Identifier: Apache-2.0
// The one number formatter: numbers as text in messages, keys, CSV cells and attributes.
#pragma once

#include <string>

namespace recofold {

// Shortest text that reads back to the same double ("4", "0.01", "1e+05",
// "0.30000000000000004"); "nan", "inf", "-inf" for non-finite values. Used in
// error messages ("prior.lambda = -1; ..."), study keys and CSV cells.
std::string format_number(double v);

// `digits` significant digits (%.*g): CSV metric cells, report tables, summaries.
std::string format_sig(double v, int digits);

// `decimals` digits after the point (%.*f): status lines ("31.42 dB", "12.5 ex/s").
std::string format_fixed(double v, int decimals);

}  // namespace recofold
