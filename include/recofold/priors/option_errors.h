// SPDX-License-Identifier: Apache-2.0
// Turns the messages of an Options::validate() into one InputError.
#pragma once

#include <string>
#include <vector>

namespace recofold {

// No-op when `errors` is empty; otherwise throws InputError(file, field, reason)
// where field is the first message's leading "group.field" token (the text
// before its first space) and reason joins all messages with "; ".
void throw_if_invalid(const std::vector<std::string>& errors, const std::string& file = "");

}  // namespace recofold
