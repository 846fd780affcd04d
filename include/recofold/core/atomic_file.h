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

// Removes temporary files of `target` left by processes that no longer run
// (killed with SIGKILL, or by a power cut, while writing): the names
// ".NAME.tmp-<pid>-<n>" (AtomicFile) and ".tmp-<pid>-<n>-NAME" (image
// exports) in the target's folder whose <pid> is not a live process. A live
// writer's temporary file is never touched. Returns how many were removed.
// AtomicFile::commit() calls it, so the next finished write of a target
// clears what an interrupted one left.
int remove_orphaned_temporaries(const std::string& target);

// Writes `text` to `path` atomically. Every write and the close are checked
// (a full disk, a quota, a read-only folder): WorkError naming `path`, and
// neither the temporary file nor a partial target is left.
void write_text_atomic(const std::string& path, const std::string& text);

// Writes `size` bytes to the file `path` (created or truncated), checking every
// write and the close. Throws WorkError naming `target` (the final name the
// user knows; `path` may be its temporary file).
void write_bytes_checked(const std::string& path, const void* data, size_t size, const std::string& target);

// Reads a whole file; throws InputError(path, "", ...) if it is missing, a
// directory, or cannot be read.
std::string read_text_file(const std::string& path);

// True if a regular file exists at `path`.
bool file_exists(const std::string& path);

// Why `path` is not a readable regular file, for messages: "file not found",
// "is a directory, expected a file", "is not a regular file".
std::string not_a_file_reason(const std::string& path);

// True if `path` is a directory.
bool is_directory(const std::string& path);

// InputError(path, "", ...) unless `path` is an existing regular file (names
// a missing file as missing and a directory as a directory).
void require_regular_file(const std::string& path);

// Lower-cased extension including compound ones: ".h5", ".nii.gz", ".png".
std::string file_extension(const std::string& path);

}  // namespace recofold
