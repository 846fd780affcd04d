// SPDX-License-Identifier: Apache-2.0
// Error hierarchy: InputError (bad input, exit code 2) and WorkError (the work failed, exit 1).
#pragma once

#include <sstream>
#include <stdexcept>
#include <string>

namespace recofold {

// Base of every error recofold throws on purpose.
class Error : public std::runtime_error {
 public:
  explicit Error(const std::string& what) : std::runtime_error(what) {}
};

// Bad input or bad usage: a file, key, dataset or flag that is missing, malformed,
// out of range or inconsistent. The CLI maps it to exit code 2.
//   file:  "meas_04.h5", "configs/study.toml", or "" when the input is a flag
//   field: "/mri/mask", "solver.step_size", "prior.wavelet.levels" in the library;
//          the CLI replaces field paths by its flags (e.g. --accel) before printing
//   line:  1-based line in a text input (TOML); 0 when not applicable
class InputError : public Error {
 public:
  InputError(std::string file, std::string field, const std::string& reason, int line = 0);
  const std::string& file() const { return file_; }
  const std::string& field() const { return field_; }
  const std::string& reason() const { return reason_; }
  int line() const { return line_; }

 private:
  std::string file_, field_, reason_;
  int line_;
};

// The work failed (numerical failure, I/O error while writing). Exit code 1.
class WorkError : public Error {
 public:
  explicit WorkError(const std::string& what) : Error(what) {}
};

namespace internal {
// Collects a message for RECOFOLD_CHECK and aborts when destroyed: a broken
// invariant is a bug, never a user mistake.
class CheckFailure {
 public:
  CheckFailure(const char* file, int line, const char* cond);
  [[noreturn]] ~CheckFailure();
  std::ostream& stream() { return msg_; }

 private:
  std::ostringstream msg_;
};
}  // namespace internal

}  // namespace recofold

// Invariant checks that stay on in release builds; for cheap checks at API
// boundaries (shapes agreeing). Usage: RECOFOLD_CHECK(a == b) << "context";
#define RECOFOLD_CHECK(cond) \
  if (cond) {                \
  } else                     \
    ::recofold::internal::CheckFailure(__FILE__, __LINE__, #cond).stream()

// Hot-loop variant, compiled out with NDEBUG.
#ifdef NDEBUG
#define RECOFOLD_DCHECK(cond) \
  if (true) {                 \
  } else                      \
    ::recofold::internal::CheckFailure(__FILE__, __LINE__, #cond).stream()
#else
#define RECOFOLD_DCHECK(cond) RECOFOLD_CHECK(cond)
#endif
