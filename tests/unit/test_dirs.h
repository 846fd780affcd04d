// SPDX-License-Identifier: Apache-2.0
// A fresh temporary folder for a unit test (shared by the test files; not a test binary itself).
#pragma once

#include <gtest/gtest.h>
#include <stdlib.h>

#include <string>
#include <vector>

namespace recofold::testing {

// A new empty folder <gtest's temporary folder>/<prefix>_XXXXXX (mkdtemp); a failed
// check (and an empty path) when it cannot be made.
inline std::string fresh_test_dir(const std::string& prefix) {
  std::string tmpl = ::testing::TempDir() + prefix + "_XXXXXX";
  std::vector<char> buf(tmpl.begin(), tmpl.end());
  buf.push_back('\0');
  const char* d = ::mkdtemp(buf.data());
  EXPECT_NE(d, nullptr) << "cannot create " << tmpl;
  return d ? std::string(d) : std::string();
}

}  // namespace recofold::testing
