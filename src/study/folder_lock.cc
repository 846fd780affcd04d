// SPDX-License-Identifier: Apache-2.0
// Study folder lock: flock(2) on <folder>/study.lock, holder text for messages.
#include "recofold/study/folder_lock.h"

#include <fcntl.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>

#include "recofold/core/error.h"
#include "recofold/core/provenance.h"

namespace recofold {

namespace {

std::string lock_path_of(const std::string& dir) {
  std::string d = dir;
  while (d.size() > 1 && d.back() == '/') d.pop_back();
  return d + "/" + study_lock_file_name();
}

std::string host_name() {
  char buf[256] = {0};
  if (::gethostname(buf, sizeof buf - 1) != 0) return "unknown host";
  return buf;
}

// Same file as the path names now (the lock file was not removed and
// re-created by a releasing holder between our open and our flock).
bool still_linked(int fd, const std::string& path) {
  struct stat a, b;
  if (::fstat(fd, &a) != 0 || ::stat(path.c_str(), &b) != 0) return false;
  return a.st_dev == b.st_dev && a.st_ino == b.st_ino;
}

bool write_all(int fd, const std::string& text) {
  if (::ftruncate(fd, 0) != 0) return false;
  size_t done = 0;
  while (done < text.size()) {
    const ssize_t n = ::pwrite(fd, text.data() + done, text.size() - done, off_t(done));
    if (n < 0 && errno == EINTR) continue;
    if (n <= 0) return false;
    done += size_t(n);
  }
  return ::fsync(fd) == 0 || errno == EINVAL;
}

}  // namespace

std::string StudyFolderLock::describe_holder(const std::string& lock_path) {
  const int fd = ::open(lock_path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return "";
  char buf[1024];
  const ssize_t n = ::read(fd, buf, sizeof buf - 1);
  ::close(fd);
  if (n <= 0) return "";
  std::string s(buf, size_t(n));
  const size_t nl = s.find('\n');
  if (nl != std::string::npos) s.resize(nl);
  return s;
}

bool StudyFolderLock::held_by_other(const std::string& dir) {
  const std::string path = lock_path_of(dir);
  const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return false;
  const bool held = ::flock(fd, LOCK_SH | LOCK_NB) != 0 && errno == EWOULDBLOCK;
  ::close(fd);  // also drops the shared lock if we got it
  return held;
}

StudyFolderLock::StudyFolderLock(const std::string& dir, const std::string& command) : path_(lock_path_of(dir)) {
  for (int attempt = 0; attempt < 20; ++attempt) {
    const int fd = ::open(path_.c_str(), O_RDWR | O_CREAT | O_CLOEXEC, 0666);
    if (fd < 0)
      throw WorkError("cannot create the study lock '" + path_ + "': " + std::strerror(errno));
    if (::flock(fd, LOCK_EX | LOCK_NB) != 0) {
      const int err = errno;
      ::close(fd);
      if (err == EINTR) continue;
      if (err != EWOULDBLOCK) throw WorkError("cannot lock '" + path_ + "': " + std::strerror(err));
      std::string holder = describe_holder(path_);
      if (holder.empty()) holder = "another process";
      throw InputError(path_, "", "the study folder is in use by " + holder +
                                      "; wait until that run ends or use another output folder");
    }
    if (!still_linked(fd, path_)) {  // the previous holder removed it while we opened it
      ::close(fd);
      continue;
    }
    // Taken (a lock file left by a dead process is simply taken over).
    std::string cmd = command;
    for (char& c : cmd)
      if (c == '\n' || c == '\r') c = ' ';
    const std::string text = "process " + std::to_string(long(::getpid())) + " on " + host_name() + " since " +
                             Provenance::utc_timestamp() + (cmd.empty() ? "" : ": " + cmd) + "\n";
    if (!write_all(fd, text)) {
      const int err = errno;
      ::unlink(path_.c_str());
      ::close(fd);
      throw WorkError("cannot write the study lock '" + path_ + "': " + std::strerror(err));
    }
    fd_ = fd;
    return;
  }
  throw WorkError("cannot take the study lock '" + path_ + "': it keeps being re-created by other runs");
}

StudyFolderLock::~StudyFolderLock() {
  if (fd_ < 0) return;
  // Remove while holding the lock; a process that opened the old file meanwhile
  // notices (still_linked) and opens the new one.
  ::unlink(path_.c_str());
  ::close(fd_);
}

}  // namespace recofold
