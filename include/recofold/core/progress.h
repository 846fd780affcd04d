// SPDX-License-Identifier: Apache-2.0
// Progress reporting: library code reports through a ProgressSink; the CLI
// decides how (or whether) it is shown.
#pragma once

#include <chrono>
#include <cstdint>
#include <iosfwd>
#include <string>

namespace recofold {

// Receives progress from long-running library work. Library functions take a
// `ProgressSink*` that may be null (no reporting).
class ProgressSink {
 public:
  virtual ~ProgressSink() = default;
  // `done` of `total` units finished; `status` is a short free text
  // ("loss 0.0123", "obj 4.1e2"). Called from one thread at a time.
  virtual void update(int64_t done, int64_t total, const std::string& status) = 0;
  // The work is over (successfully or not).
  virtual void finish(const std::string& status) = 0;
};

// How a StreamProgress shows itself.
enum class ProgressMode {
  kBar,    // one updating line with bar, rate and time left (terminals)
  kLines,  // a plain line at most every `line_interval_s` seconds (logs, CI)
  kQuiet,  // nothing
};

// Formats progress onto a stream (the CLI passes std::cerr).
class StreamProgress : public ProgressSink {
 public:
  StreamProgress(std::ostream& out, std::string label, ProgressMode mode, double line_interval_s = 5.0);
  void update(int64_t done, int64_t total, const std::string& status) override;
  void finish(const std::string& status) override;

  // "1h02m", "3m07s", "12s"
  static std::string format_duration(double seconds);

 private:
  std::ostream& out_;
  std::string label_;
  ProgressMode mode_;
  double interval_;
  std::chrono::steady_clock::time_point start_, last_;
  int64_t first_done_ = -1;
  bool printed_ = false;
};

// Picks kBar when `is_terminal`, kLines otherwise, kQuiet when `quiet`.
ProgressMode choose_progress_mode(bool quiet, bool is_terminal);

}  // namespace recofold
