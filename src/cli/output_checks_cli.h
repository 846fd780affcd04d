// SPDX-License-Identifier: Apache-2.0
// Checks of output locations made before any work starts (CLI only): an
// output that cannot be written is bad usage (exit 2), found at once rather
// than after minutes of work.
#pragma once

#include <string>
#include <vector>

namespace recofold::cli {

// InputError naming `flag` unless a file can be created at `path`: the path
// is not empty and not a folder, its folder exists, is a folder (not a file)
// and accepts a new file (probed by creating and removing an empty one, so a
// read-only file system, missing permission or a full inode table show here).
void require_writable_file(const std::string& path, const std::string& flag);

// InputError naming `flag` unless `path` is a folder that can be written, or
// does not exist yet and its parent folder can be written. A regular file at
// `path` is reported as a file where a folder is expected.
void require_writable_folder(const std::string& path, const std::string& flag);

// InputError naming `out_flag` when `out` names the same file as one of the
// `inputs` (same device and inode, so other spellings and links are caught):
// writing would replace the input.
void require_distinct_output(const std::string& out, const std::string& out_flag,
                             const std::vector<std::string>& inputs);

}  // namespace recofold::cli
