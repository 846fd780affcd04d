// SPDX-License-Identifier: Apache-2.0
// Temporary-file-then-rename writes.
#include "recofold/core/atomic_file.h"

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
}

void write_text_atomic(const std::string& path, const std::string& text) {
  AtomicFile f(path);
  {
    std::ofstream out(f.temp_path(), std::ios::binary);
    if (!out) throw WorkError("cannot write " + path + ": " + std::strerror(errno));
    out << text;
    out.flush();
    if (!out) throw WorkError("write failed for " + path);
  }
  f.commit();
}

std::string read_text_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path, "", "cannot open file (missing or unreadable)");
  std::ostringstream ss;
  ss << in.rdbuf();
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
