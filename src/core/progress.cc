// SPDX-License-Identifier: Apache-2.0
// Stream progress reporter with a steady-rate time-left estimate.
#include "recofold/core/progress.h"

#include <cmath>
#include <cstdio>
#include <ostream>

namespace recofold {

namespace {
constexpr int64_t kSteadySteps = 3;       // steps after the baseline before an estimate
constexpr double kSteadySeconds = 1.0;    // or this much steady time (with at least one step)
}  // namespace

StreamProgress::StreamProgress(std::ostream& out, std::string label, ProgressMode mode, double line_interval_s,
                               Clock clock)
    : out_(out), label_(std::move(label)), mode_(mode), interval_(line_interval_s), clock_(std::move(clock)) {
  start_run(now());
}

double StreamProgress::now() const {
  if (clock_) return clock_();
  return std::chrono::duration<double>(std::chrono::steady_clock::now().time_since_epoch()).count();
}

void StreamProgress::start_run(double at) {
  start_ = last_print_ = at;
  first_done_ = -1;
  last_done_ = last_total_ = 0;
  printed_ = finished_ = false;
}

std::string StreamProgress::format_duration(double s) {
  if (!std::isfinite(s) || s < 0) return "?";
  char buf[32];
  const long t = std::lround(s);
  if (t >= 3600)
    std::snprintf(buf, sizeof buf, "%ldh%02ldm", t / 3600, (t % 3600) / 60);
  else if (t >= 60)
    std::snprintf(buf, sizeof buf, "%ldm%02lds", t / 60, t % 60);
  else
    std::snprintf(buf, sizeof buf, "%lds", t);
  return buf;
}

double StreamProgress::seconds_left(int64_t done, int64_t total) const {
  if (first_done_ < 0 || total <= 0) return NAN;
  const int64_t steps = last_done_ - first_done_;
  const double dt = last_time_ - first_time_;
  const bool steady = steps >= kSteadySteps || (steps >= 1 && dt >= kSteadySeconds);
  if (!steady || !(dt > 0.0)) return NAN;
  return static_cast<double>(total - done) * dt / static_cast<double>(steps);
}

void StreamProgress::update(int64_t done, int64_t total, const std::string& status) {
  if (finished_) start_run(finish_time_);  // a new run on the same sink, timed from the previous finish
  const double t = now();
  if (first_done_ < 0) {
    first_done_ = done;
    first_time_ = t;
  }
  last_done_ = done;
  last_total_ = total;
  last_time_ = t;
  if (mode_ == ProgressMode::kQuiet) return;
  const bool last_step = total > 0 && done >= total;
  const double since_last = t - last_print_;
  if (last_step) return;  // the final line (finish) reports it
  if (mode_ == ProgressMode::kLines && printed_ && since_last < interval_) return;
  if (mode_ == ProgressMode::kBar && printed_ && since_last < 0.1) return;
  last_print_ = t;
  const double left = seconds_left(done, total);
  const int64_t steps = done - first_done_;
  const double dt = t - first_time_;
  const double rate = steps > 0 && dt > 0 ? static_cast<double>(steps) / dt : NAN;
  const double frac = total > 0 ? static_cast<double>(done) / static_cast<double>(total) : 0.0;
  char head[200];
  char tail[64] = "";
  if (std::isfinite(left)) std::snprintf(tail, sizeof tail, " %.3g/s, left %s", rate, format_duration(left).c_str());
  if (mode_ == ProgressMode::kBar) {
    const int width = 24;
    const int fill = static_cast<int>(std::lround(frac * width));
    std::string bar(static_cast<size_t>(fill), '#');
    bar += std::string(static_cast<size_t>(width - fill), '.');
    std::snprintf(head, sizeof head, "\r%s [%s] %lld/%lld%s ", label_.c_str(), bar.c_str(),
                  static_cast<long long>(done), static_cast<long long>(total), tail);
    out_ << head << status << "\x1b[K" << std::flush;
  } else {
    std::snprintf(head, sizeof head, "%s: %lld/%lld (%.0f%%), elapsed %s%s", label_.c_str(),
                  static_cast<long long>(done), static_cast<long long>(total), 100.0 * frac,
                  format_duration(t - start_).c_str(), tail);
    out_ << head << (status.empty() ? "" : "; ") << status << "\n" << std::flush;
  }
  printed_ = true;
}

void StreamProgress::finish(const std::string& status) {
  if (finished_) return;
  finished_ = true;
  finish_time_ = now();
  if (mode_ == ProgressMode::kQuiet) return;
  const double elapsed = finish_time_ - start_;
  if (mode_ == ProgressMode::kBar && printed_) out_ << "\r";
  out_ << label_ << ": ";
  if (last_total_ > 0)
    out_ << last_done_ << "/" << last_total_ << " ";
  out_ << "done in " << format_duration(elapsed) << (status.empty() ? "" : "; ") << status;
  if (mode_ == ProgressMode::kBar) out_ << "\x1b[K";
  out_ << "\n" << std::flush;
}

ProgressMode choose_progress_mode(bool quiet, bool is_terminal) {
  if (quiet) return ProgressMode::kQuiet;
  return is_terminal ? ProgressMode::kBar : ProgressMode::kLines;
}

}  // namespace recofold
