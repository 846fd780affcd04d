// SPDX-License-Identifier: Apache-2.0
// Study configuration: phantoms, acquisition axes, methods and repetitions read from a TOML file.
//
// A study compares reconstruction methods over a grid of cases
//   phantom x acquisition x method x repetition
// (case_grid.h expands it). The file (a commented example is
// configs/study-example.toml):
//
//   name        = "qc-protocols"    optional; default the file name without extension
//   description = "..."             optional
//   size        = 64                image grid: N or [ny, nx] (each 16..1024)
//   repetitions = 2                 >= 1; each repetition draws new masks and noise
//   seed        = 1                 study seed (masks, noise, families, learned models)
//   metrics     = ["psnr", "ssim"]  optional: metrics shown in the summary and
//                                   report (results.csv always has all of
//                                   psnr, ssim, nrmse, hfen)
//   [region]                        optional region of interest for the metrics:
//   radius = 0.8                    a centred disc, fraction of the half-width (0, 1]
//
//   [[phantom]]                     one table per phantom source:
//   table  = "phantoms/qc-disk.toml"  a phantom table (relative to the config file
//                                     or, if not found there, to the current folder)
//   or
//   family = "textured"             a seeded family (phantom/family.h)
//   count  = 2                      objects 0..count-1 (1..1000)
//   seed   = 7                      family seed (default: the study seed)
//                                   Held out: a learned method's model must not have
//                                   trained or validated on these objects (same family,
//                                   seed and index, from its trained_on seed ranges);
//                                   the study exits 2 naming both ranges otherwise
//                                   (study/held_out.h). Models the study trains get a
//                                   seed no family table uses.
//
//   [[measurement]]                 measured data as an object (MRI only): a fully
//   file = "scan-full.h5"           sampled measurement file (e.g. from `recofold import`;
//   name = "scan"                   grid = the study size, coil maps present); optional label
//                                   (default the file name). Each MRI case undersamples it
//                                   retrospectively with the case's mask (acquire/retrospective.h):
//                                   the coils axis is replaced by the file's coil count, the
//                                   noise axis is noise added to the measured samples, the
//                                   truth is the fully sampled coil-combined image
//                                   ("fully sampled"; it carries the scan's noise); CT,
//                                   denoise and inpaint protocols skip it, and so do
//                                   the [mri] trajectories (no resampling onto them).
//                                   A non-Cartesian file (/mri/trajectory, with /truth)
//                                   runs as measured: its own trajectory, once per noise
//                                   value (noise added to its samples), scored against
//                                   the file's truth.
//
//   [[object]]                      an image as the object: any image file recofold reads
//   file  = "head.dcm"              (DICOM file or series folder, NIfTI, MHA, NRRD, PNG, HDF5)
//   slice = 40                      slice of a stack (default 0); name = optional label
//                                   (default file name + "-s" + slice). The slice must have the
//                                   study size; its magnitude is the object. Simulated from
//                                   its pixels (truth "discrete": no analytic truth, the
//                                   inverse crime is possible; the report says so).
//
//   [mri]                           optional MRI protocol axes (lists or single values):
//   pattern = ["lines-vd"]          mask patterns (sampling/mask.h)
//   accel   = [2, 4, 8]             accelerations R (1..64)
//   coils   = [1, 4]                receive coils (1..32)
//   noise   = [0.0, 0.01]           complex noise sigma per real/imaginary part (object max ~1)
//   center  = 0.08                  fully sampled centre fraction (single value)
//   trajectory = ["radial-golden"]  non-Cartesian acquisitions (kept as coordinates, never
//                                   rasterised): radial | radial-golden | spiral
//                                   (sampling/trajectory.h); simulated exactly at the points
//                                   (acquire/mri_trajectory.h, as `simulate --trajectory`)
//   spokes  = [16, 32]              radial kinds: spokes (1..100000; required with them)
//   interleaves = [4, 8]            spiral: interleaves (1..1024; required with spiral;
//                                   hardware defaults of sampling/trajectory.h)
//   readout = 64                    radial kinds: samples per spoke (single value, 2..65536;
//                                   default 2 min(ny, nx), twice oversampled)
//                                   With trajectory, the Cartesian patterns run only when
//                                   pattern is given too (accel and center need it); a
//                                   trajectory's R is ny nx / samples per coil. The
//                                   points do not depend on the repetition (only the noise
//                                   does). Every MRI method runs on trajectories
//                                   (zero-filled = gridding); unrolled models with DC
//                                   steps through the SENSE-NUFFT, their rows outside
//                                   the (Cartesian) training conditions.
//
//   [ct]                            optional CT protocol axes (parallel beam):
//   views   = [60, 120]             views equally spaced over the arc (>= 2)
//   arc     = [180]                 arc in degrees, (0, 360]
//   photons = [0, 1e5]              incident photons per ray (0: noiseless)
//   mu      = 0.0                   attenuation per unit intensity, 1/mm (single value);
//                                   0 (default): automatic, the largest line integral is 4
//
//   [denoise]                       optional denoising axes (y = x + n, acquire/image_problem.h):
//   noise   = [0.05, 0.1]           Gaussian noise sigma per pixel (>= 0; object max ~1)
//
//   [inpaint]                       optional inpainting axes (y = M x + n on the kept pixels):
//   pattern = ["random"]            random | blocks
//   keep    = [0.3, 0.5]            kept pixel fraction, in (0, 1]
//   noise   = [0.01]                Gaussian noise sigma per kept pixel (>= 0)
//   block   = 8                     blocks: block side in pixels (single value, 1..256)
//                                   The pixel pattern depends on (pattern, repetition) only:
//                                   the noise axis compares the same pixels, and a larger
//                                   keep keeps a superset of a smaller one's pixels.
//
//   keep = "all"                    optional, top level: keep every case's measurement
//                                   (DIR/measurements/<case>.h5) and reconstruction
//                                   (DIR/images/<case>.h5, as `recofold recon` writes it);
//                                   results.csv names them in measurement_file and
//                                   image_file. Default "montage": only the images of the
//                                   first object's first repetition, for the report.
//
//   [[method]]                      one table per method (StudyMethod lists every key):
//   name      = "fista-wavelet"     label in results.csv (default: method-prior)
//   method    = "fista"             zero-filled | fbp | cg | ista | fista | admm | pdhg | unrolled
//   prior     = "wavelet"           none | l2 | wavelet | tv | tv-aniso (solvers only)
//   lambda    = 0.01                weight >= 0; or a list [1e-3, 1e-2]: per case the
//                                   value closest to the truth is kept (the oracle
//                                   rule: the best a tuned classical method can do;
//                                   the row records it); or "auto" (the default with
//                                   a prior): MRI by Morozov's discrepancy principle
//                                   with the measurement's known noise, CT by the
//                                   held-out-views rule (recon/reconstruct.h; MRI
//                                   needs noise > 0, CT needs >= 12 views)
//   iters     = 50                  iterations (solvers; default per method)
//   wavelet   = "db4"   levels = 3  wavelet prior options
//   nonneg    = true                box x >= 0 (default true for CT, false for MRI)
//   filter    = "ram-lak"           fbp window
//   lambda_rule, lambda_solves, tol, cycle_spin, restart, rho, cg_iters, tau, sigma,
//   combine, maps                   the other spec fields (StudyMethod)
//   modality  = "mri"               restrict to one modality: mri | ct | denoise | inpaint
//                                   (default: where the method applies: zero-filled all
//                                   but CT, fbp CT, solvers all;
//                                   required for unrolled)
//   model     = "models/mri.h5"     unrolled: a trained model file
//   train     = "configs/train-robustness-mri.toml"
//                                   unrolled: train a model inside the study first
//                                   (into DIR/models/<name>.h5; its trained_on
//                                   conditions mark the results)
//   train_steps = 200               optional override of the training config's steps
//                                   (the study also sets the training seed: from the
//                                   study seed and the name, apart from every family seed)
//   optional  = true                unrolled: leave the method out (with a note in the
//                                   report) when this build has no learn module
//
// Each method's spec is checked against every modality it runs on at load
// time; its violations name the keys: "configs/x.toml:31: method[2].lambda =
// -1; must be >= 0 and finite, or auto".
// Every problem is an InputError naming the file, line and key. Nothing is
// run or written by loading.
#pragma once

#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "recofold/core/config.h"
#include "recofold/core/measurement.h"
#include "recofold/core/types.h"
#include "recofold/recon/recon_spec.h"

namespace recofold {

// One object of the study: a phantom table, a member of a family, a measured
// fully sampled MRI data set or an image file.
struct StudyPhantom {
  std::string label;        // "qc-disk", "textured-7-0" (family, seed, index), "scan", "head-s40"
  std::string table_path;   // set for table phantoms (resolved path)
  std::string family;       // set for family objects
  uint64_t family_seed = 0;
  int family_index = 0;
  int table = -1;           // position among the [[phantom]] tables (-1 for other objects)
  int line = 0;             // line of its [[phantom]] table (families: of its seed key, if given)
  std::string measurement_path;  // [[measurement]]: fully sampled MRI measurement file (resolved)
  int measured_coils = 0;        // its coil count
  std::string image_path;        // [[object]]: image file or DICOM folder (resolved)
  int slice = 0;                 // its slice
  // The data read and checked at load time (shared by every case of the object).
  std::shared_ptr<const Measurement> measured;  // [[measurement]]
  std::shared_ptr<const ImageC> pixels;         // [[object]]: the slice [ny, nx]
  double pixel_spacing_mm = 1.0;                // [[object]]: from the file

  // The kind of truth the object's cases are scored against: "analytic"
  // (tables, families), "fully sampled" (measurements) or "discrete" (images).
  std::string truth_kind() const;
};

// MRI protocol axes; each list has at least one value.
struct MriAxes {
  std::vector<std::string> patterns = {"lines-vd"};
  std::vector<double> accelerations = {4.0};
  std::vector<int> coils = {1};
  std::vector<double> noise_sigmas = {0.0};
  double center_fraction = 0.08;
  // Non-Cartesian acquisitions: kinds ("radial", "radial-golden", "spiral";
  // empty: none), spokes (radial kinds), interleaves (spiral), samples per
  // spoke (0: the default of TrajectoryOptions).
  std::vector<std::string> trajectories;
  std::vector<int> spokes;
  std::vector<int> interleaves;
  int readout = 0;
};

// CT protocol axes (parallel beam, detectors ceil(sqrt(2) max(ny, nx)), pixel fov / nx).
struct CtAxes {
  std::vector<int> views = {60};
  std::vector<double> arcs_deg = {180.0};
  std::vector<double> photons = {0.0};
  double mu_per_mm = 0.0;  // 0: automatic (acquire/ct_simulation.h)
};

// Denoising axes.
struct DenoiseAxes {
  std::vector<double> noise_sigmas = {0.05};
};

// Inpainting axes.
struct InpaintAxes {
  std::vector<std::string> patterns = {"random"};
  std::vector<double> keeps = {0.5};
  std::vector<double> noise_sigmas = {0.01};
  int block_size = 8;
};

// One method of the study: a label and the ReconSpec its keys describe.
// Keys of a [[method]] table and the spec fields they set (recon/recon_spec.h;
// unset keys take the defaults of ReconSpec::with_defaults, the same as the
// command line's):
//   method -> method, prior -> prior, wavelet -> prior.wavelet.family,
//   levels -> prior.wavelet.levels, cycle_spin -> prior.wavelet.cycle_spin,
//   lambda (number | list | "auto") -> lambda, lambda_rule -> lambda.rule,
//   lambda_solves -> lambda.max_solves, iters -> iterations, tol -> tolerance,
//   restart -> fista.restart, rho -> admm.rho, cg_iters -> admm.cg_iterations,
//   tau / sigma -> pdhg.tau / pdhg.sigma, filter -> fbp.filter,
//   combine / maps -> zero_filled.combine / maps, nonneg -> nonneg, model -> model (unrolled, or the
//   flow of prior = "flow", read once at load).
struct StudyMethod {
  std::string name;                 // label (unique per modality)
  ReconSpec spec;                   // as given; the model of a trained method is set by the runner
  std::vector<Modality> modalities;  // where it runs
  std::string model_path;           // unrolled: model file; prior flow: the flow (resolved)
  std::string train_config;         // unrolled: training config (resolved)
  int64_t train_steps = 0;          // > 0 overrides the training config's steps
  bool optional = false;            // unrolled, prior flow: skip when learn is absent
  int index = 0;                    // position among the [[method]] tables
  int line = 0;                     // line of the [[method]] table

  bool learned() const { return spec.method == Method::kUnrolled; }
  // A classical solver with the likelihood of a flow model as its prior (prior = "flow", model = ...).
  bool flow_prior() const { return spec.prior.kind && *spec.prior.kind == PriorKind::kFlow; }
  // Needs the learn module: learned() or flow_prior().
  bool needs_learn() const { return learned() || flow_prior(); }
  bool applies_to(Modality modality) const;
  // results.csv's method and prior columns: the method name, and the prior
  // that runs on `modality` ("learned" for unrolled, "none" for direct methods).
  std::string method_name() const;
  std::string prior_name(Modality modality) const;
};

struct StudyConfig {
  std::string file;         // path it was read from ("" for parsed text)
  std::string text;         // the config text
  std::string name, description;
  Index ny = 64, nx = 64;
  int repetitions = 1;
  uint64_t seed = 1;
  std::vector<std::string> metrics = {"psnr", "ssim", "nrmse", "hfen"};
  double region_radius = 0.0;  // 0: whole image
  std::vector<StudyPhantom> phantoms;
  std::optional<MriAxes> mri;
  std::optional<CtAxes> ct;
  std::optional<DenoiseAxes> denoise;
  std::optional<InpaintAxes> inpaint;
  bool keep_all = false;  // keep = "all"
  std::vector<StudyMethod> methods;
  // Methods left out when loading (e.g. optional learned methods in a build
  // without learn), one sentence each; shown in the report.
  std::vector<std::string> notes;
  // 16 hex digits: FNV-1a of the config text and of every phantom table and
  // model file it names. Shards and resumed runs must share it.
  std::string hash;

  // True when the study has a protocol table for `modality`.
  bool has_protocol(Modality modality) const;

  // Reads and validates `path`. InputError (file, line, key) on any problem:
  // unknown keys (e.g. an unknown acquisition axis), an empty grid (no
  // phantom, no protocol, no method that applies to a protocol), a model
  // file that does not exist, a learned method in a build without learn.
  static StudyConfig load(const std::string& path);
  // Parses text; `name` stands in for the file; relative paths resolve
  // against `base_dir` and then the current folder.
  static StudyConfig parse(const std::string& text, const std::string& name, const std::string& base_dir = ".");
};

// True when a learned backend is available (recon/learned_backend.h), i.e.
// learned (unrolled) methods can run.
bool study_has_learn();

// The metric names results.csv uses (those of `score --json`).
const std::vector<std::string>& study_metric_names();

}  // namespace recofold
