// SPDX-License-Identifier: Apache-2.0
// Shared by the fuzz targets (tests/fuzz/*_fuzz.cc): one input, one reader call.
//
// A reader may refuse an input only with recofold's own errors (InputError,
// WorkError); any other exception (std::bad_alloc, a library's exception
// escaping, std::out_of_range...) escapes the target and libFuzzer reports it
// as a crash, like a sanitizer finding or a signal.
#pragma once

#include <fcntl.h>
#include <unistd.h>

#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <string>

#include "recofold/core/error.h"

namespace recofold::fuzz {

// The input as text (TOML readers).
inline std::string text_of(const uint8_t* data, size_t size) {
  return std::string(reinterpret_cast<const char*>(data), size);
}

// Writes the input to a per-process scratch file with extension `ext` (file
// readers choose the format by extension) and returns its path. The folder is
// $TMPDIR or /tmp.
inline std::string scratch_file(const uint8_t* data, size_t size, const std::string& ext) {
  const char* t = std::getenv("TMPDIR");
  const std::string path =
      std::string(t && *t ? t : "/tmp") + "/recofold-fuzz-" + std::to_string(long(::getpid())) + ext;
  const int fd = ::open(path.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
  if (fd < 0) std::abort();  // the harness itself failed, not the reader
  size_t done = 0;
  while (done < size) {
    const ssize_t n = ::write(fd, data + done, size - done);
    if (n <= 0) std::abort();
    done += size_t(n);
  }
  ::close(fd);
  return path;
}

// Runs `f`, accepting recofold's refusals.
template <class F>
int run_one(F&& f) {
  try {
    f();
  } catch (const recofold::Error&) {
  }
  return 0;
}

}  // namespace recofold::fuzz
