// SPDX-License-Identifier: Apache-2.0
// Exclusive use of a study output folder by one process at a time.
//
// The lock is the file <folder>/study.lock holding an exclusive flock(2) lock
// for as long as the StudyFolderLock object lives; the file's text names the
// holder (process id, host, start time, command) so a refused second run can
// say who has the folder. The kernel drops the lock when its process dies
// (also on kill -9), so a lock file left by a dead process is taken over by
// the next run without asking. The file is removed when the lock is released.
//
// One process holds a folder's lock once: a second StudyFolderLock on the
// same folder in the same process is refused like one in another process.
// Code that holds the lock and runs the study itself (a runner driving
// run_study on a folder it locked) passes StudyRunOptions::lock = false.
#pragma once

#include <string>

namespace recofold {

class StudyFolderLock {
 public:
  // Takes the lock of the existing folder `dir`. InputError naming
  // <dir>/study.lock and the holder when another run holds it; WorkError when
  // the lock file cannot be created (e.g. a read-only folder).
  StudyFolderLock(const std::string& dir, const std::string& command);
  ~StudyFolderLock();
  StudyFolderLock(const StudyFolderLock&) = delete;
  StudyFolderLock& operator=(const StudyFolderLock&) = delete;

  const std::string& path() const { return path_; }

  // The holder named in a lock file ("process 123 on host h since
  // 2026-01-02T03:04:05Z: recofold study ..."), "" when the file is missing or
  // empty. For messages only.
  static std::string describe_holder(const std::string& lock_path);

  // True when another process (or another lock object of this process)
  // holds the lock of `dir` right now. Does not take the lock.
  static bool held_by_other(const std::string& dir);

 private:
  std::string path_;
  int fd_ = -1;
};

// File name of the lock inside a study folder.
inline const char* study_lock_file_name() { return "study.lock"; }

}  // namespace recofold
