// SPDX-License-Identifier: Apache-2.0
// `recofold trajectory`: design a radial or spiral trajectory (or load user points), analyse its PSF, write file, report and picture.
#include <memory>
#include <string>

#include "cli_common.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/io/image_export.h"
#include "recofold/io/trajectory_file.h"
#include "recofold/ops/fft.h"
#include "recofold/sampling/trajectory.h"
#include "recofold/sampling/trajectory_analysis.h"
#include "trajectory_cli.h"

namespace recofold::cli {

namespace {

struct TrajectoryFlags {
  std::string kind, from, size = "256", dcf = "auto", out, report, png;
  TrajectoryOptions o;
};

void run_trajectory(TrajectoryFlags& f, const CLI::App& sub, const Context& ctx) {
  require_output_path(f.out, "--out", {".h5"});
  if (!f.report.empty()) require_output_path(f.report, "--report", {".json"});
  if (!f.png.empty()) require_output_path(f.png, "--png", {".png"});
  if (f.kind.empty() == f.from.empty())
    throw InputError("", "--kind", "give exactly one of --kind " + accepted_trajectory_kinds() + " or --from FILE");
  const auto dcf = parse_dcf_method(f.dcf);
  if (!dcf) throw InputError("", "--dcf", "unknown method '" + f.dcf + "' (expected auto, ramp or pipe-menon)");
  const bool radial_flags = sub.count("--spokes") + sub.count("--readout") + sub.count("--tiny-golden") +
                            sub.count("--first-angle") > 0;
  const char* spiral_flags[] = {"--interleaves", "--fov-mm", "--gmax", "--smax", "--dwell-us",
                                "--raster-us", "--vd-edge", "--vd-power"};
  bool any_spiral = false;
  for (const char* fl : spiral_flags) any_spiral = any_spiral || sub.count(fl) > 0;

  apply_threads(ctx);
  set_fft_measure(false);  // one-off transforms: instant, deterministic plans
  Provenance prov = make_provenance(ctx);
  auto progress = make_progress(ctx, "density compensation");
  Trajectory t;
  if (!f.from.empty()) {
    if (radial_flags || any_spiral) throw InputError("", "--from", "design flags do not apply to --from");
    Index ny = 0, nx = 0;
    if (sub.count("--size") > 0) std::tie(ny, nx) = parse_grid_size(f.size);
    if (*dcf == DcfMethod::kRadialRamp) throw InputError("", "--dcf", "'ramp' needs a designed radial trajectory");
    t = load_trajectory(f.from, "--from", ny, nx, progress.get());
    if (*dcf == DcfMethod::kPipeMenon && t.dcf_method != "pipe-menon")
      t = trajectory_from_points(t.ny, t.nx, t.kx, t.ky, {}, f.from, progress.get());
    prov.extra["trajectory_source"] = f.from;
    prov.extra["trajectory_source_checksum_fnv1a64"] = file_checksum(f.from);
  } else {
    const auto kind = parse_trajectory_kind(f.kind);
    if (!kind || *kind == TrajectoryKind::kFile)
      throw InputError("", "--kind", "unknown kind '" + f.kind + "' (expected one of: " + accepted_trajectory_kinds() + ")");
    f.o.kind = *kind;
    std::tie(f.o.ny, f.o.nx) = parse_grid_size(f.size);
    f.o.dcf = *dcf;
    const bool radial = *kind != TrajectoryKind::kSpiral;
    if (radial && any_spiral) throw InputError("", "--interleaves", "spiral flags (--interleaves, --fov-mm, --gmax, ...) apply to --kind spiral only");
    if (!radial && radial_flags) throw InputError("", "--spokes", "radial flags (--spokes, --readout, --tiny-golden, --first-angle) apply to radial kinds only");
    if (*kind == TrajectoryKind::kRadial && sub.count("--tiny-golden") > 0)
      throw InputError("", "--tiny-golden", "applies to --kind radial-golden only");
    try {
      t = make_trajectory(f.o, progress.get());
    } catch (const InputError&) {
      rethrow_with_trajectory_flags(std::current_exception());
    }
  }
  const TrajectoryAnalysis a = analyse_trajectory(t);
  write_trajectory_file(f.out, t, prov);
  say(ctx, "wrote " + f.out + ": " + trajectory_summary(t, a));
  if (!f.report.empty()) {
    write_text_atomic(f.report, trajectory_report_json(t, a) + "\n");
    say(ctx, "wrote " + f.report);
  }
  if (!f.png.empty()) {
    PngWindow w;
    w.auto_window = false;
    write_png(f.png, trajectory_picture(a), w);
    say(ctx, "wrote " + f.png + " (left: samples per k-space cell, log scale 0.1 to 100; right: log10 |PSF|, 0 to -60 dB)");
  }
}

}  // namespace

void register_cmd_trajectory(CLI::App& app, Context& ctx) {
  auto f = std::make_shared<TrajectoryFlags>();
  const TrajectoryOptions d;
  CLI::App* sub = app.add_subcommand(
      "trajectory", "Design a non-Cartesian k-space trajectory (radial, golden-angle, spiral) and analyse its PSF");
  sub->add_option("--kind", f->kind, "Trajectory: " + accepted_trajectory_kinds());
  sub->add_option("--from", f->from,
                  "Take user points instead: a trajectory .h5 (/trajectory/k float32 [M,2], cycles per FOV) or a text "
                  "file (.txt/.csv, 'kx ky [dcf]' per line)");
  sub->add_option("--size", f->size, "Image grid N or NYxNX (default 256); k-max = min/2 cycles per FOV");
  sub->add_option("--spokes", f->o.spokes, "Radial: number of spokes (default: ceil(pi N / 2), fully sampled in angle)");
  sub->add_option("--readout", f->o.readout, "Radial: samples per spoke (default 2N: 2x readout oversampling)");
  sub->add_option("--tiny-golden", f->o.tiny_golden,
                  "radial-golden: step pi/(tau + K - 1); 1 = golden angle 111.246 deg (default), 2 = 68.75, 5 = 32.04, 7 = 23.63");
  sub->add_option("--first-angle", f->o.first_angle_deg, "Radial: angle of the first spoke, degrees (default 0)");
  sub->add_option("--interleaves", f->o.interleaves, "Spiral: interleaves (default 16)");
  sub->add_option("--fov-mm", f->o.fov_mm, "Spiral: field of view in mm (default 256)");
  sub->add_option("--gmax", f->o.max_gradient_mT_per_m, "Spiral: gradient limit, mT/m (default 40, common practice)");
  sub->add_option("--smax", f->o.max_slew_T_per_m_per_s, "Spiral: slew-rate limit, T/m/s (default 150, common practice)");
  sub->add_option("--dwell-us", f->o.dwell_us, "Spiral: ADC dwell time, us (default 2, common practice)");
  sub->add_option("--raster-us", f->o.raster_us, "Spiral: gradient raster time, us (default 4, common practice)");
  sub->add_option("--vd-edge", f->o.vd_edge,
                  "Spiral: variable density, k-space edge sampled this many times sparser than the centre (default 1 = uniform)");
  sub->add_option("--vd-power", f->o.vd_power, "Spiral: FOV(k) = FOV / (1 + (edge - 1) (k/kmax)^power); default 2");
  sub->add_option("--dcf", f->dcf, "Density compensation: auto (ramp for radial, pipe-menon otherwise), ramp, pipe-menon");
  sub->add_option("--out", f->out, "Trajectory file (.h5)")->required();
  sub->add_option("--report", f->report, "JSON report: design, PSF main lobe and side-lobe, sampling density profile");
  sub->add_option("--png", f->png, "Picture: sampling density map and log-magnitude PSF side by side");
  sub->footer(std::string(kResearchUseLine));
  sub->callback([f, sub, &ctx] { run_trajectory(*f, *sub, ctx); });
}

}  // namespace recofold::cli
