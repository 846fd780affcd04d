// SPDX-License-Identifier: Apache-2.0
// Output location checks made before any work starts.
#include "output_checks_cli.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>

#include "recofold/core/error.h"

namespace recofold::cli {

namespace {

std::string parent_of(const std::string& path) {
  std::string p = path;
  while (p.size() > 1 && p.back() == '/') p.pop_back();
  const auto slash = p.find_last_of('/');
  if (slash == std::string::npos) return ".";
  return slash == 0 ? "/" : p.substr(0, slash);
}

// Creates and removes an empty file in `dir`; empty string on success, else the reason.
std::string probe_folder(const std::string& dir) {
  const std::string probe = dir + "/.recofold-write-probe-" + std::to_string(::getpid());
  const int fd = ::open(probe.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0600);
  if (fd < 0) {
    if (errno == EEXIST) return "";  // a probe of this process already there: the folder takes files
    if (errno == EROFS) return "is on a read-only file system";
    if (errno == EACCES || errno == EPERM) return "is not writable (permission denied)";
    if (errno == ENOSPC || errno == EDQUOT) return "has no space left for a new file";
    return std::string("does not accept a new file (") + std::strerror(errno) + ")";
  }
  ::close(fd);
  ::unlink(probe.c_str());
  return "";
}

void require_folder_takes_files(const std::string& dir, const std::string& path, const std::string& flag) {
  struct stat st;
  if (::stat(dir.c_str(), &st) != 0) {
    if (errno == ENOTDIR) throw InputError(path, flag, "a part of the output folder '" + dir + "' is a file, not a folder");
    throw InputError(path, flag, "output folder '" + dir + "' does not exist");
  }
  if (!S_ISDIR(st.st_mode)) throw InputError(path, flag, "'" + dir + "' is a file, not a folder");
  const std::string why = probe_folder(dir);
  if (!why.empty()) throw InputError(path, flag, "output folder '" + dir + "' " + why);
}

}  // namespace

void require_writable_file(const std::string& path, const std::string& flag) {
  if (path.empty()) throw InputError("", flag, "an output path is required");
  struct stat st;
  if (path.back() == '/' || (::stat(path.c_str(), &st) == 0 && S_ISDIR(st.st_mode)))
    throw InputError(path, flag, "is a folder; expected a file name");
  if (::stat(path.c_str(), &st) == 0 && !S_ISREG(st.st_mode))
    throw InputError(path, flag, "exists and is not a regular file");
  require_folder_takes_files(parent_of(path), path, flag);
}

void require_writable_folder(const std::string& path, const std::string& flag) {
  if (path.empty()) throw InputError("", flag, "an output folder is required");
  struct stat st;
  if (::stat(path.c_str(), &st) == 0) {
    if (!S_ISDIR(st.st_mode)) throw InputError(path, flag, "is a file; expected a folder");
    const std::string why = probe_folder(path);
    if (!why.empty()) throw InputError(path, flag, "output folder " + why);
    return;
  }
  if (errno == ENOTDIR) throw InputError(path, flag, "a part of this path is a file, not a folder");
  require_folder_takes_files(parent_of(path), path, flag);
}

void require_distinct_output(const std::string& out, const std::string& out_flag,
                             const std::vector<std::string>& inputs) {
  struct stat so;
  if (::stat(out.c_str(), &so) != 0) return;  // a new file cannot be an input
  for (const auto& in : inputs) {
    struct stat si;
    if (in.empty() || ::stat(in.c_str(), &si) != 0) continue;
    if (si.st_dev == so.st_dev && si.st_ino == so.st_ino)
      throw InputError(out, out_flag, "is the input file '" + in + "'; writing it would replace the input (choose another output name)");
  }
}

}  // namespace recofold::cli
