// SPDX-License-Identifier: Apache-2.0
// Trajectory helpers of the CLI: loading user or designed trajectories, flag names in errors, report and summary.
#include "trajectory_cli.h"

#include <cmath>
#include <cstdio>
#include <map>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/json.h"
#include "recofold/io/trajectory_file.h"
#include "recofold/sampling/trajectory.h"

namespace recofold::cli {

namespace {

const std::map<std::string, std::string>& field_flags() {
  static const std::map<std::string, std::string> m = {
      {"trajectory.ny", "--size"},
      {"trajectory.nx", "--size"},
      {"trajectory.spokes", "--spokes"},
      {"trajectory.readout", "--readout"},
      {"trajectory.tiny_golden", "--tiny-golden"},
      {"trajectory.first_angle_deg", "--first-angle"},
      {"trajectory.interleaves", "--interleaves"},
      {"trajectory.fov_mm", "--fov-mm"},
      {"trajectory.max_gradient_mT_per_m", "--gmax"},
      {"trajectory.max_slew_T_per_m_per_s", "--smax"},
      {"trajectory.dwell_us", "--dwell-us"},
      {"trajectory.raster_us", "--raster-us"},
      {"trajectory.vd_edge", "--vd-edge"},
      {"trajectory.vd_power", "--vd-power"},
      {"trajectory.dcf", "--dcf"},
  };
  return m;
}

}  // namespace

Trajectory load_trajectory(const std::string& path, const std::string& flag, Index ny, Index nx,
                           ProgressSink* progress) {
  if (!file_exists(path)) throw InputError(path, flag, "file not found");
  const std::string ext = file_extension(path);
  if (ext == ".h5") {
    Trajectory t = read_trajectory_file(path, ny, nx);
    if (t.dcf.empty()) {
      Trajectory with = trajectory_from_points(t.ny, t.nx, t.kx, t.ky, {}, path, progress);
      t.dcf = std::move(with.dcf);
      t.dcf_method = with.dcf_method;
    }
    return t;
  }
  if (ext == ".txt" || ext == ".csv") {
    if (ny < 2 || nx < 2) throw InputError(path, flag, "a text trajectory needs the image size (give --size)");
    TextPoints p = read_trajectory_text(path);
    return trajectory_from_points(ny, nx, std::move(p.kx), std::move(p.ky), std::move(p.dcf), path, progress);
  }
  throw InputError(path, flag, "unsupported extension '" + ext + "' (expected .h5, .txt or .csv)");
}

void rethrow_with_trajectory_flags(const std::exception_ptr& error) {
  try {
    std::rethrow_exception(error);
  } catch (const InputError& e) {
    std::string reason = e.reason();
    std::string field = e.field();
    const auto& m = field_flags();
    auto it = m.find(field);
    if (it != m.end()) field = it->second;
    for (const auto& [name, flag] : m) {
      for (size_t p = reason.find(name); p != std::string::npos; p = reason.find(name, p + flag.size())) {
        // whole field names only ("trajectory.ny" is not a prefix of another field here)
        reason.replace(p, name.size(), flag);
      }
    }
    throw InputError(e.file(), field, reason, e.line());
  }
}

std::string trajectory_report_json(const Trajectory& t, const TrajectoryAnalysis& a) {
  JsonObjectWriter design;
  for (const auto& [k, v] : t.numbers) design.add(k, v);
  for (const auto& [k, v] : t.texts) design.add(k, v);
  JsonObjectWriter w;
  w.add("research_use_only", true);
  w.add("kind", std::string(to_string(t.kind)));
  w.add("dcf_method", t.dcf_method);
  w.add("fov_mm", t.fov_mm);
  w.add("design", design);
  w.add_raw("analysis", a.to_json());
  return w.str();
}

std::string trajectory_summary(const Trajectory& t, const TrajectoryAnalysis& a) {
  char buf[512];
  const double db = a.psf_sidelobe_ratio > 0 ? 20.0 * std::log10(a.psf_sidelobe_ratio) : -INFINITY;
  std::string extra;
  if (t.kind == TrajectoryKind::kSpiral) {
    char e[160];
    std::snprintf(e, sizeof e, ", readout %.2f ms, peak %.1f mT/m and %.1f T/m/s",
                  t.numbers.count("readout_ms") ? t.numbers.at("readout_ms") : 0.0,
                  t.numbers.count("peak_gradient_mT_per_m") ? t.numbers.at("peak_gradient_mT_per_m") : 0.0,
                  t.numbers.count("peak_slew_T_per_m_per_s") ? t.numbers.at("peak_slew_T_per_m_per_s") : 0.0);
    extra = e;
  }
  std::snprintf(buf, sizeof buf,
                "%s %lldx%lld: %lld readouts x %lld samples (%lld points, Cartesian-equivalent R %.2f), k-max %.1f, "
                "PSF side-lobe %.1f dB, main lobe %.1f px, dcf %s%s",
                std::string(to_string(t.kind)).c_str(), static_cast<long long>(t.ny), static_cast<long long>(t.nx),
                static_cast<long long>(t.readouts), static_cast<long long>(t.samples_per_readout),
                static_cast<long long>(t.points()), a.cartesian_acceleration, a.kmax_reached, db,
                a.main_lobe_radius_px, t.dcf_method.c_str(), extra.c_str());
  return buf;
}

}  // namespace recofold::cli
