// SPDX-License-Identifier: Apache-2.0
// Atomic writes: write to a temporary file beside the target, then rename.
#pragma once

#include <string>

namespace recofold {

// Reserves a temporary path in the target's folder ("dir/.name.tmp-<pid>-<n>").
// Write to temp_path(), then commit() renames it onto the target in one step.
// If commit() is never called (an exception, an interruption handled by the
// caller), the destructor removes the temporary file, so no half-written
// output is ever left under the target name.
class AtomicFile {
 public:
  explicit AtomicFile(std::string target);
  ~AtomicFile();
  AtomicFile(const AtomicFile&) = delete;
  AtomicFile& operator=(const AtomicFile&) = delete;

  const std::string& target() const { return target_; }
  const std::string& temp_path() const { return temp_; }
  // Renames the temporary file onto the target. Throws WorkError on failure.
  void commit();

 private:
  std::string target_, temp_;
  bool committed_ = false;
};

// Writes `text` to `path` atomically. Throws WorkError on I/O failure.
void write_text_atomic(const std::string& path, const std::string& text);

// Reads a whole file; throws InputError(path, "", ...) if it cannot be opened.
std::string read_text_file(const std::string& path);

// True if a regular file exists at `path`.
bool file_exists(const std::string& path);

// Lower-cased extension including compound ones: ".h5", ".nii.gz", ".png".
std::string file_extension(const std::string& path);

}  // namespace recofold
