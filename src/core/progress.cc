// SPDX-License-Identifier: Apache-2.0
// Stream progress reporter with rate and time-left estimate.
#include "recofold/core/progress.h"

#include <cmath>
#include <cstdio>
#include <ostream>

namespace recofold {

StreamProgress::StreamProgress(std::ostream& out, std::string label, ProgressMode mode, double line_interval_s)
    : out_(out), label_(std::move(label)), mode_(mode), interval_(line_interval_s) {
  start_ = last_ = std::chrono::steady_clock::now();
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

void StreamProgress::update(int64_t done, int64_t total, const std::string& status) {
  if (mode_ == ProgressMode::kQuiet) return;
  const auto now = std::chrono::steady_clock::now();
  if (first_done_ < 0) first_done_ = done;
  const double elapsed = std::chrono::duration<double>(now - start_).count();
  const double since_last = std::chrono::duration<double>(now - last_).count();
  const bool last_step = total > 0 && done >= total;
  if (mode_ == ProgressMode::kLines && printed_ && since_last < interval_ && !last_step) return;
  if (mode_ == ProgressMode::kBar && printed_ && since_last < 0.1 && !last_step) return;
  last_ = now;
  const double rate = elapsed > 0 ? static_cast<double>(done) / elapsed : 0.0;
  const double left = (rate > 0 && total > 0) ? static_cast<double>(total - done) / rate : NAN;
  char head[160];
  const double frac = total > 0 ? static_cast<double>(done) / static_cast<double>(total) : 0.0;
  if (mode_ == ProgressMode::kBar) {
    const int width = 24;
    const int fill = static_cast<int>(std::lround(frac * width));
    std::string bar(static_cast<size_t>(fill), '#');
    bar += std::string(static_cast<size_t>(width - fill), '.');
    std::snprintf(head, sizeof head, "\r%s [%s] %lld/%lld %.3g/s left %s ", label_.c_str(), bar.c_str(),
                  static_cast<long long>(done), static_cast<long long>(total), rate,
                  format_duration(left).c_str());
    out_ << head << status << "\x1b[K" << std::flush;
  } else {
    std::snprintf(head, sizeof head, "%s: %lld/%lld (%.0f%%) %.3g/s, elapsed %s, left %s", label_.c_str(),
                  static_cast<long long>(done), static_cast<long long>(total), 100.0 * frac, rate,
                  format_duration(elapsed).c_str(), format_duration(left).c_str());
    out_ << head << (status.empty() ? "" : "; ") << status << "\n" << std::flush;
  }
  printed_ = true;
}

void StreamProgress::finish(const std::string& status) {
  if (mode_ == ProgressMode::kQuiet) return;
  const double elapsed = std::chrono::duration<double>(std::chrono::steady_clock::now() - start_).count();
  if (mode_ == ProgressMode::kBar && printed_) out_ << "\n";
  out_ << label_ << ": done in " << format_duration(elapsed) << (status.empty() ? "" : "; ") << status << "\n"
       << std::flush;
}

ProgressMode choose_progress_mode(bool quiet, bool is_terminal) {
  if (quiet) return ProgressMode::kQuiet;
  return is_terminal ? ProgressMode::kBar : ProgressMode::kLines;
}

}  // namespace recofold
