// SPDX-License-Identifier: Apache-2.0
// One study case: simulate its measurement, reconstruct with one method, score against the truth.
//
// A case runs its method's ReconSpec through recon's reconstruct(), the same
// call `recofold recon` makes, so a study and the command line give the same
// image for the same spec and measurement.
#pragma once

#include <cstdint>
#include <limits>
#include <string>

#include "recofold/core/image_record.h"
#include "recofold/core/measurement.h"
#include "recofold/core/types.h"
#include "recofold/metrics/image_quality.h"
#include "recofold/study/case_grid.h"
#include "recofold/study/study_config.h"

namespace recofold {

class LearnedModelSet;

// A simulated measurement with its truth and the scoring region.
struct CaseMeasurement {
  Measurement measurement;
  ImageF truth;    // real truth: |object| for MRI, the attenuation image for CT, the object for denoise/inpaint
  ImageF region;   // empty: whole image
};

// Simulates phantom x acquisition:
//   MRI: mask make_mask(pattern, accel, center, mask_seed) on [ny, nx];
//        simulate_mri with analytic truth (discrete for [[object]] images),
//        `coils` synthetic coils, noise sigma, seed noise_seed; a
//        [[measurement]] object is instead undersampled retrospectively with
//        that mask (noise sigma added to its samples, seed noise_seed) and
//        scored against its fully sampled coil-combined magnitude;
//   MRI on a trajectory: make_trajectory(trajectory_options(config, acquisition))
//        and simulate_mri_trajectory_measurement (as `simulate --trajectory`:
//        exact samples at the points for analytic objects, the NUFFT of the
//        pixels for [[object]] images), coils, noise sigma, seed noise_seed;
//        a non-Cartesian [[measurement]] object runs as measured, with noise
//        sigma added to its samples (seed noise_seed), scored against the
//        file's truth;
//   CT:  parallel beam, `views` equally spaced over `arc`, detectors
//        ceil(sqrt(2) max(ny, nx)), pixel fov_mm / nx, mu from [ct] (0: automatic), exact line
//        integrals (from the pixels for [[object]] images), Poisson noise with
//        `photons` per ray (none when 0);
//   denoise / inpaint: simulate_image_problem of the object's real part with
//        the noise sigma (seed noise_seed); inpaint keeps `keep` of the pixels
//        in the given pattern (block side from [inpaint]), drawn with mask_seed.
// InputError/WorkError from the library pass through.
CaseMeasurement simulate_case_measurement(const StudyConfig& config, const StudyPhantom& phantom,
                                          const Acquisition& acquisition, uint64_t mask_seed, uint64_t noise_seed);

// What one case produced. A failing case has ok = false and the error text;
// the study writes it into the row and goes on.
struct CaseOutcome {
  bool ok = false;
  std::string error;
  Scores scores;
  double seconds = 0.0;    // reconstruction wall time (all lambdas of an oracle list)
  int iterations = 0;      // solver iterations (0 for direct methods)
  double lambda = std::numeric_limits<double>::quiet_NaN();  // the weight used (NaN: none)
  std::string in_training;  // learned methods: "yes" | "no"; "" otherwise
  std::string outside;      // learned methods: which conditions lie outside training
  ImageF image;             // the reconstruction as scored (magnitude for MRI, real part for CT)
  ImageRecord record;       // the reconstruction as `recofold recon` writes it (reconstruction_record)
  // keep = "all": the files kept for the case, relative to the study folder ("" otherwise).
  std::string measurement_file, image_file;
};

// keep = "all" file names, relative to the study folder: a readable form of
// the key ('|' -> '_', '/' -> '-') and 8 hex digits of its hash, so that
// distinct keys never share a file: "measurements/<name>.h5" for a
// measurement key, "images/<name>.h5" for a case key.
std::string kept_measurement_file(const std::string& measurement_key);
std::string kept_image_file(const std::string& case_key);

// Reconstructs and scores one case; never throws for a failing reconstruction
// (the error goes into the outcome). `learned` is needed for unrolled methods.
CaseOutcome run_case_method(const StudyMethod& method, const CaseMeasurement& data, const LearnedModelSet* learned);

}  // namespace recofold
