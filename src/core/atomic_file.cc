// SPDX-License-Identifier: Apache-2.0
// Temporary-file-then-rename writes.
#include "recofold/core/atomic_file.h"

#include <dirent.h>
#include <fcntl.h>
#include <signal.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <cctype>
#include <cerrno>
#include <cstdio>
#include <cstring>
#include <fstream>
#include <sstream>
#include <sys/stat.h>

#include "recofold/core/error.h"

namespace recofold {

namespace {
std::atomic<unsigned> g_counter{0};

bool starts_with(const std::string& s, const std::string& p) { return s.compare(0, p.size(), p) == 0; }

// Parses "<pid>-<n>" at the front of `rest`; returns the pid, or 0 if `rest`
// does not start that way. `tail` receives what follows "<n>".
long parse_pid_counter(const std::string& rest, std::string& tail) {
  size_t i = 0;
  while (i < rest.size() && std::isdigit(static_cast<unsigned char>(rest[i]))) ++i;
  if (i == 0 || i > 9 || i >= rest.size() || rest[i] != '-') return 0;
  const long pid = std::stol(rest.substr(0, i));
  size_t j = i + 1;
  while (j < rest.size() && std::isdigit(static_cast<unsigned char>(rest[j]))) ++j;
  if (j == i + 1) return 0;
  tail = rest.substr(j);
  return pid;
}

bool process_is_gone(long pid) {
  if (pid <= 0 || pid == static_cast<long>(::getpid())) return false;
  return ::kill(static_cast<pid_t>(pid), 0) != 0 && errno == ESRCH;
}
}  // namespace

int remove_orphaned_temporaries(const std::string& target) {
  const auto slash = target.find_last_of('/');
  const std::string dir = slash == std::string::npos ? "" : target.substr(0, slash + 1);
  const std::string base = slash == std::string::npos ? target : target.substr(slash + 1);
  if (base.empty()) return 0;
  DIR* d = ::opendir(dir.empty() ? "." : dir.c_str());
  if (!d) return 0;
  const std::string own_prefix = "." + base + ".tmp-";
  int removed = 0;
  while (const dirent* e = ::readdir(d)) {
    const std::string name = e->d_name;
    std::string tail;
    long pid = 0;
    if (starts_with(name, own_prefix)) {
      pid = parse_pid_counter(name.substr(own_prefix.size()), tail);
      if (!tail.empty()) pid = 0;
    } else if (starts_with(name, ".tmp-")) {
      pid = parse_pid_counter(name.substr(5), tail);
      if (tail != "-" + base) pid = 0;
    }
    if (process_is_gone(pid) && std::remove((dir + name).c_str()) == 0) ++removed;
  }
  ::closedir(d);
  return removed;
}

AtomicFile::AtomicFile(std::string target) : target_(std::move(target)) {
  const auto slash = target_.find_last_of('/');
  const std::string dir = slash == std::string::npos ? "" : target_.substr(0, slash + 1);
  const std::string base = slash == std::string::npos ? target_ : target_.substr(slash + 1);
  temp_ = dir + "." + base + ".tmp-" + std::to_string(::getpid()) + "-" + std::to_string(g_counter++);
}

AtomicFile::~AtomicFile() {
  if (!committed_) std::remove(temp_.c_str());
}

void AtomicFile::commit() {
  if (std::rename(temp_.c_str(), target_.c_str()) != 0) {
    const std::string why = std::strerror(errno);
    std::remove(temp_.c_str());
    throw WorkError("cannot move finished output into place at " + target_ + ": " + why);
  }
  committed_ = true;
  remove_orphaned_temporaries(target_);
}

void write_bytes_checked(const std::string& path, const void* data, size_t size, const std::string& target) {
  const int fd = ::open(path.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
  if (fd < 0) throw WorkError("cannot write " + target + ": " + std::strerror(errno));
  const char* p = static_cast<const char*>(data);
  size_t left = size;
  while (left > 0) {
    const ssize_t n = ::write(fd, p, left);
    if (n < 0 && errno == EINTR) continue;
    if (n <= 0) {
      const std::string why = n < 0 ? std::strerror(errno) : "no progress";
      ::close(fd);
      throw WorkError("cannot write " + target + ": " + why + " (after " + std::to_string(size - left) + " of " +
                      std::to_string(size) + " bytes)");
    }
    p += n;
    left -= static_cast<size_t>(n);
  }
  if (::close(fd) != 0) throw WorkError("cannot write " + target + ": closing failed: " + std::strerror(errno));
}

void write_text_atomic(const std::string& path, const std::string& text) {
  AtomicFile f(path);
  write_bytes_checked(f.temp_path(), text.data(), text.size(), path);
  f.commit();
}

std::string not_a_file_reason(const std::string& path) {
  struct stat st;
  if (::stat(path.c_str(), &st) != 0) return "file not found";
  if (S_ISDIR(st.st_mode)) return "is a directory, expected a file";
  if (!S_ISREG(st.st_mode)) return "is not a regular file";
  return "cannot be read";
}

bool is_directory(const std::string& path) {
  struct stat st;
  return ::stat(path.c_str(), &st) == 0 && S_ISDIR(st.st_mode);
}

void require_regular_file(const std::string& path) {
  struct stat st;
  if (::stat(path.c_str(), &st) != 0) {
    if (errno == ENOENT || errno == ENOTDIR) throw InputError(path, "", "file not found");
    throw InputError(path, "", std::string("cannot be opened: ") + std::strerror(errno));
  }
  if (S_ISDIR(st.st_mode)) throw InputError(path, "", "is a directory, expected a file");
  if (!S_ISREG(st.st_mode)) throw InputError(path, "", "is not a regular file");
}

std::string read_text_file(const std::string& path) {
  require_regular_file(path);
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path, "", std::string("cannot be read: ") + std::strerror(errno));
  std::ostringstream ss;
  ss << in.rdbuf();
  if (in.bad()) throw InputError(path, "", "reading failed");
  return ss.str();
}

bool file_exists(const std::string& path) {
  struct stat st;
  return ::stat(path.c_str(), &st) == 0 && S_ISREG(st.st_mode);
}

std::string file_extension(const std::string& path) {
  std::string lower = path;
  std::transform(lower.begin(), lower.end(), lower.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  const auto slash = lower.find_last_of('/');
  const std::string base = slash == std::string::npos ? lower : lower.substr(slash + 1);
  for (const char* compound : {".nii.gz", ".tar.gz"}) {
    const std::string c(compound);
    if (base.size() > c.size() && base.compare(base.size() - c.size(), c.size(), c) == 0) return c;
  }
  const auto dot = base.find_last_of('.');
  return dot == std::string::npos ? "" : base.substr(dot);
}

}  // namespace recofold
