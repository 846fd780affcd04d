// SPDX-License-Identifier: Apache-2.0
// Mask file reading/writing and the mask report, shared by the MRI sub-commands.
#include "mri_cli.h"

#include <cmath>
#include <cstdio>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/json.h"
#include "recofold/core/number_format.h"
#include "recofold/io/h5_file.h"
#include "recofold/io/image_export.h"

namespace recofold::cli {

std::string mask_report_json(const SamplingMask& m, const MaskAnalysis& a) {
  JsonObjectWriter w;
  w.add("pattern", m.pattern);
  if (m.requested_acceleration > 0)
    w.add("requested_acceleration", m.requested_acceleration);
  else
    w.add_null("requested_acceleration");  // a mask read from a file
  w.add("achieved_acceleration", m.achieved_acceleration);
  w.add("seed", m.seed);
  w.add("center_rows", m.center_rows);
  w.add("center_cols", m.center_cols);
  if (!m.spoke_angles_rad.empty()) w.add("spokes", m.spoke_angles_rad.size());
  for (const auto& [k, v] : m.numbers) w.add(k, v);
  w.add_raw("analysis", a.to_json());
  return w.str();
}

std::string mask_summary(const SamplingMask& m, const MaskAnalysis& a) {
  char buf[512];
  const double db = a.psf_sidelobe_ratio > 0 ? 20.0 * std::log10(a.psf_sidelobe_ratio) : -INFINITY;
  const std::string req =
      m.requested_acceleration > 0 ? "requested " + format_sig(m.requested_acceleration, 10) : "not requested";
  const std::string tpsf =
      a.tpsf_sidelobe_ratio > 0 ? format_fixed(20.0 * std::log10(a.tpsf_sidelobe_ratio), 1) + " dB"
                                : (a.tpsf_sidelobe_ratio == 0 ? "-inf dB" : "n/a");
  std::snprintf(buf, sizeof buf,
                "%s %lldx%lld: R %.3f (%s), %lld samples, calibration %lldx%lld, PSF side-lobe %.1f dB, "
                "TPSF side-lobe %s",  // both side-lobes in dB of their peak
                m.pattern.c_str(), static_cast<long long>(a.ny), static_cast<long long>(a.nx), m.achieved_acceleration,
                req.c_str(), static_cast<long long>(m.samples), static_cast<long long>(a.calibration.rows),
                static_cast<long long>(a.calibration.cols), db,
                tpsf.c_str());
  return buf;
}

}  // namespace recofold::cli
