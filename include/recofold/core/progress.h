// SPDX-License-Identifier: Apache-2.0
// Progress reporting: library code reports through a ProgressSink; the CLI
// decides how (or whether) it is shown.
#pragma once

#include <chrono>
#include <cstdint>
#include <functional>
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
//
// Honest estimates: the first update only sets the baseline (the first step
// often includes one-off costs such as FFTW planning or loading), and the
// rate is measured from there ("steady work"). No time left is shown until at
// least 3 steps or 1 s of steady work have been seen; then
//   left = (total - done) * (steady seconds / steady steps).
// The final line ("label: 150/150 done in 4s; status") is printed once per
// run: finish() after finish() prints nothing, and an update() after a
// finish() starts a new run (a sink reused for a second solve), timed from
// that finish. The last step
// is not printed separately (the final line covers it); in bar mode the final
// line overwrites the bar.
class StreamProgress : public ProgressSink {
 public:
  // Seconds on a monotonic clock; the default reads std::chrono::steady_clock.
  // Tests inject a fake clock.
  using Clock = std::function<double()>;

  StreamProgress(std::ostream& out, std::string label, ProgressMode mode, double line_interval_s = 5.0,
                 Clock clock = {});
  void update(int64_t done, int64_t total, const std::string& status) override;
  void finish(const std::string& status) override;

  // Seconds left for `total` at the steady rate seen so far (NaN while there
  // is not enough steady work for an estimate). For tests and callers that
  // show their own display.
  double seconds_left(int64_t done, int64_t total) const;

  // "1h02m", "3m07s", "12s"
  static std::string format_duration(double seconds);

 private:
  double now() const;
  void start_run(double at);

  std::ostream& out_;
  std::string label_;
  ProgressMode mode_;
  double interval_;
  Clock clock_;
  double start_ = 0.0, last_print_ = 0.0;  // clock seconds: start of the run, last line printed
  double first_time_ = 0.0;                 // clock seconds of the first update (the steady baseline)
  int64_t first_done_ = -1, last_done_ = 0, last_total_ = 0;
  double last_time_ = 0.0;
  bool printed_ = false, finished_ = false;
  double finish_time_ = 0.0;  // clock seconds of the last finish() (a reused sink's next run starts there)
};

// Picks kBar when `is_terminal`, kLines otherwise, kQuiet when `quiet`.
ProgressMode choose_progress_mode(bool quiet, bool is_terminal);

}  // namespace recofold
