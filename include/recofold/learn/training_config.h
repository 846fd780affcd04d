// SPDX-License-Identifier: Apache-2.0
// Training configuration: acquisition conditions drawn per example, optimiser settings, and the whole config file.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "recofold/core/config.h"
#include "recofold/core/measurement.h"
#include "recofold/learn/architecture.h"
#include "recofold/learn/flow_architecture.h"

namespace recofold {

// Objects a model has seen: objects first..last (inclusive) of the phantom
// families `families` drawn with family seed `seed` (phantom/family.h,
// make_family_object(options, seed, index)). Studies compare their family
// phantoms (family, seed, index) against these ranges to keep test objects
// held out. Seeds are below 2^53 so JSON numbers carry them exactly.
struct SeedRange {
  std::string use;                    // "train" | "validation"
  std::vector<std::string> families;
  uint64_t seed = 0;
  uint64_t first = 0, last = 0;
};

// The conditions a model is trained on (the [data] table of a training
// config, and the `trained_on` attribute of a model file). For every training
// example each quantity is drawn independently: names uniformly from their
// list, numbers uniformly from [min, max] (photons log-uniformly), integers
// uniformly from min..max. In TOML a range is a number (min = max) or a
// two-element list [min, max].
struct TrainingConditions {
  Modality modality = Modality::kMri;  // mri | ct | denoise | inpaint
  Index ny = 64, nx = 64;             // "size" = N or [ny, nx]
  std::vector<std::string> families = {"textured"};  // phantom families (family.h)
  // MRI.
  // MRI: mask patterns (sampling/mask.h); inpaint: pixel patterns random | blocks (default random).
  std::vector<std::string> patterns = {"lines-vd"};
  double accel_min = 4.0, accel_max = 4.0;           // "accel": acceleration R (1..32)
  double center_fraction = 0.08;                     // "center": fully sampled centre rows fraction [0, 0.5]
  // "noise": MRI: complex noise sigma per real/imag part (object max ~1); denoise / inpaint: the
  // Gaussian noise std per pixel in the object's intensity units.
  double noise_min = 0.01, noise_max = 0.01;
  int coils_min = 1, coils_max = 1;                  // "coils": synthetic receive coils (1..32)
  // Non-Cartesian training: "trajectory" = radial | radial-golden | spiral ("" = the Cartesian
  // masks of "patterns"); "readouts" = spokes (radial) or interleaves (spiral), N or [min, max],
  // readout length and spiral hardware limits the defaults of sampling/trajectory.h. patterns and
  // accel do not apply then (a trajectory's R is ny nx / its samples).
  std::string trajectory;
  int readouts_min = 0, readouts_max = 0;
  // CT (parallel beam, equally spaced views over the arc).
  int views_min = 30, views_max = 30;                // "views" (2..2000)
  double arc_deg = 180.0;                            // "arc" (0, 360]
  double photons_min = 0.0, photons_max = 0.0;       // "photons": incident photons per ray; 0 = noiseless
  double mu_per_mm = 0.0;                            // "mu": attenuation per unit intensity, 1/mm; 0 = automatic
  // Inpaint: "keep", the fraction of pixels observed, in (0, 1].
  double keep_min = 0.5, keep_max = 0.5;
  // "truth": "analytic" (exact data) | "discrete" (A x of the raster); denoise and inpaint observe
  // the raster itself (always "discrete").
  std::string truth = "analytic";
  double fov_mm = 256.0;                             // "fov_mm": field of view (> 0)
  // Objects seen in training and validation (written by the trainers into
  // trained_on as "seeds": [{"use", "families", "seed", "first", "last"}, ...];
  // not a config key).
  std::vector<SeedRange> seeds;

  // Every violation as "data.key = value; rule".
  std::vector<std::string> validate() const;
  std::string to_json() const;
  static TrainingConditions from_json(const std::string& json, const std::string& file,
                                      const std::string& field = "/model@trained_on");
  // Reads a [data] table; unknown keys and bad values -> InputError with line and key.
  static TrainingConditions from_config(const Config& table);

  // Empty when the measurement's conditions lie inside these ranges (with 5%
  // tolerance on continuous quantities); otherwise one phrase per condition
  // outside, e.g. "acceleration 8.00 outside [4, 4]; noise sigma 0.03 outside
  // [0.01, 0.01]". Modality and grid size are not checked here (a model
  // refuses those outright).
  std::string outside(const Measurement& m) const;
};

// How training runs (the [train] table).
struct TrainOptions {
  int64_t steps = 2000;          // optimiser steps (>= 1)
  int batch = 4;                 // examples per step (1..256)
  double learning_rate = 1e-3;   // Adam's initial rate (> 0); Kingma & Ba, ICLR 2015
  std::string schedule = "cosine";  // "constant" | "cosine" (to lr_final_fraction) | "step" (x0.5 every step_every)
  double lr_final_fraction = 0.05;  // cosine: final rate as a fraction of the initial one, [0, 1]
  int64_t step_every = 1000;     // step schedule: steps between halvings (>= 1)
  int64_t warmup_steps = 0;      // linear warm-up from 0 (>= 0)
  double clip_norm = 1.0;        // global gradient-norm clipping; 0 = off
  std::string loss = "mse";      // "mse" | "l1" on the magnitude image
  double ssim_weight = 0.0;      // adds ssim_weight * (1 - SSIM) (Gaussian window 11, sigma 1.5), >= 0
  int validation_count = 16;     // fixed validation examples (drawn from their own seed stream)
  int64_t validation_every = 100;  // steps between validations (>= 1)
  int64_t checkpoint_every = 200;  // steps between checkpoints (>= 1)
  uint64_t seed = 1;             // seeds the initial weights, the data and the validation set
  int threads = 0;               // torch/OpenMP threads; 0 = the CLI's --threads (all cores)
  double max_minutes = 0.0;      // stop after this wall time (0 = no limit); the model is still written

  std::vector<std::string> validate() const;
  static TrainOptions from_config(const Config& table);
};

// A whole training config file:
//   [model]  kind = "unrolled" (default: architecture keys of architecture.h)
//            or kind = "flow" (flow keys of flow_architecture.h)
//   [data]   TrainingConditions keys
//   [train]  TrainOptions keys
struct TrainingConfig {
  std::string kind = "unrolled";     // "unrolled" | "flow"
  UnrolledArchitecture architecture;  // kind "unrolled"
  FlowArchitecture flow;              // kind "flow"
  // kind "unrolled" with prior "flow": the flow model file (model.flow_model)
  // whose architecture fills architecture.flow and whose weights start training.
  std::string flow_model;
  TrainingConditions data;
  TrainOptions train;
  std::string file;  // path it was read from
  std::string text;  // the config text (provenance; a resumed run checks it is unchanged)

  // Reads and validates; every problem is an InputError naming file, line and key.
  static TrainingConfig load(const std::string& path);
  static TrainingConfig parse(const std::string& text, const std::string& name);
};

}  // namespace recofold
