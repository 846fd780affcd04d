// SPDX-License-Identifier: Apache-2.0
// The case grid of a study: acquisitions, cases with stable keys and seeds, and deterministic shards.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "recofold/sampling/trajectory.h"
#include "recofold/study/study_config.h"

namespace recofold {

// One acquisition protocol point. MRI fields are set for modality mri, CT
// fields for ct; the others stay at their defaults and are blank in results.csv.
struct Acquisition {
  Modality modality = Modality::kMri;
  std::string pattern;       // MRI mask pattern; inpaint pixel pattern (random | blocks)
  double accel = 0.0;        // MRI acceleration R
  int coils = 0;             // MRI receive coils
  double noise = 0.0;        // noise sigma (MRI, denoise, inpaint)
  double keep = 0.0;         // inpaint kept pixel fraction
  int views = 0;             // CT views
  double arc = 0.0;          // CT arc, degrees
  double photons = 0.0;      // CT photons per ray (0: noiseless)
  // MRI on a trajectory (pattern empty): the kind ("radial", "radial-golden",
  // "spiral"), readouts (spokes or interleaves), samples per spoke requested
  // (radial; 0: default) and the points per coil M; accel = ny nx / M (to 6
  // significant digits).
  std::string trajectory;
  int readouts = 0;
  int readout = 0;
  Index samples = 0;

  // "mri/lines-vd/R4/c1/s0.01", "mri/radial-golden/16x64/c1/s0" (readouts x
  // samples per readout), "ct/v60/a180/p1e+05", "denoise/s0.05" or
  // "inpaint/random/k0.5/s0.01".
  std::string key() const;
  bool non_cartesian() const { return !trajectory.empty(); }
};

// The acquisition axes (results.csv column names, in order): MRI (pattern,
// trajectory, readouts, samples, accel, coils, noise), inpaint's keep, CT
// (views, arc, photons); denoise uses noise, inpaint pattern, keep and noise.
// Cartesian MRI rows leave trajectory, readouts and samples blank; trajectory
// rows leave pattern blank and give accel = ny nx / samples (the Cartesian R
// of the same sample count, so both kinds share the accel axis).
const std::vector<std::string>& acquisition_axes();
// The value of axis `axis` as CSV text ("" when the axis is not the acquisition's modality).
std::string axis_value(const Acquisition& a, const std::string& axis);

// MRI grid (pattern x accel x coils x noise, then trajectory x readouts x
// coils x noise), CT grid (views x arc x photons), denoise grid (noise),
// inpaint grid (pattern x keep x noise).
std::vector<Acquisition> expand_acquisitions(const StudyConfig& config);

// The design options of a trajectory acquisition on the study grid (the
// sampling/trajectory.h defaults otherwise; DCF auto).
TrajectoryOptions trajectory_options(const StudyConfig& config, const Acquisition& acquisition);

// One case: indices into the config's phantoms, acquisitions and methods.
struct StudyCase {
  int index = 0;             // position in the canonical order (below)
  int phantom = 0;
  int acquisition = 0;
  int method = 0;
  int repetition = 0;
  int group = 0;             // index of its measurement (phantom, acquisition, repetition)
  std::string key;           // "<phantom>|<acquisition key>|<method>|r<rep>", unique
  std::string measurement_key;  // "<phantom>|<acquisition key>|r<rep>"
  uint64_t mask_seed = 0;    // sampling: from (pattern, accel, repetition) only, so phantoms,
                             // coil counts and noise levels share the mask; inpaint: from
                             // (pattern, repetition), so keep levels nest and noise levels
                             // share the pixels
  uint64_t noise_seed = 0;   // acquisition noise (per measurement)
};

struct CaseGrid {
  // expand_acquisitions(config), then the acquisitions of [[measurement]]
  // objects: a Cartesian file runs the Cartesian MRI points with the coils
  // axis replaced by the file's coil count (the points of the first coils
  // value; trajectory and CT points do not apply); a non-Cartesian file runs
  // its own trajectory once per noise value (its coils, readouts and samples).
  std::vector<Acquisition> acquisitions;
  std::vector<StudyCase> cases;  // canonical order: phantom, acquisition, repetition, method
  int groups = 0;                // measurements (cases sharing one simulated measurement)
};

// Expands the grid. Methods that do not apply to an acquisition's modality
// are left out. Seeds come from the study seed and the case's keys only (not
// from positions), so adding a method or a phantom does not change others'.
CaseGrid expand_grid(const StudyConfig& config);

// A deterministic 1/N part of a study: shard I of N (1 <= I <= N) holds the
// measurement groups g with g mod N = I - 1, so every case is in exactly one
// shard and a measurement is simulated by one shard only.
struct Shard {
  int index = 1;
  int count = 1;
  bool contains(const StudyCase& c) const { return c.group % count == index - 1; }
  std::string to_string() const { return std::to_string(index) + "/" + std::to_string(count); }
  // Parses "I/N"; InputError(file "", `field`) unless 1 <= I <= N.
  static Shard parse(const std::string& text, const std::string& field = "shard");
};

}  // namespace recofold
