// SPDX-License-Identifier: Apache-2.0
// CT parts of `recofold simulate`: its flags and their checks; the protocol
// defaults and the simulation are acquire's (acquire/ct_simulation.h).
#pragma once

#include <CLI/CLI.hpp>
#include <cstdint>
#include <string>

#include "cli_common.h"
#include "recofold/core/image_record.h"
#include "recofold/core/measurement.h"
#include "recofold/phantom/phantom.h"

namespace recofold::cli {

// Flags of `simulate --modality ct` (defaults documented in --help). Zero for
// arc, detectors, spacing, sid, sdd and mu means "choose automatically";
// giving such a flag explicitly with 0 is an error.
struct CtSimulateFlags {
  int views = 180;                             // --views N, equally spaced over the arc
  double arc_deg = 0.0;                        // --arc DEG (limited angle when < 180; 0: 180 parallel / 360 fan)
  bool golden = false;                         // --golden: golden-angle ordering
  std::string views_file;                      // --views-file F: angles in degrees, one per line
  std::string view_spec;                       // --view-spec F: sampling-masks/ct-*.toml protocol
  std::string geometry = "parallel";           // --geometry parallel|fan (a protocol may set it)
  std::string detector_shape = "equiangular";  // --detector-shape flat|equiangular (fan)
  int detectors = 0;                           // --detectors N (0: ceil(sqrt(2)*max(ny,nx)))
  double detector_spacing_mm = 0;              // --detector-spacing MM (0: one pixel at the isocentre)
  double detector_offset_mm = 0;               // --detector-offset MM
  double source_to_isocenter_mm = 0;           // --sid MM (fan; 0: 2x field of view)
  double source_to_detector_mm = 0;            // --sdd MM (fan; 0: 2x sid)
  double photons = 0;                          // --photons I0 (0: noiseless)
  bool bowtie = false;                         // --bowtie: incident photons fall off across the detector
  double bowtie_edge = 0.25;                   // --bowtie-edge F: I0 fraction at the detector edge, (0, 1]
  double electronic_sigma = 0;                 // --electronic-noise SIGMA (counts)
  double mu_per_mm = 0;                        // --mu (1/mm per unit phantom intensity; 0: automatic)

  // Set by add_ct_simulate_flags so explicit values can be told from defaults
  // (null when the struct is filled by code: then only the values count).
  struct Given {
    const CLI::Option *views = nullptr, *arc = nullptr, *golden = nullptr, *geometry = nullptr, *detectors = nullptr,
                      *spacing = nullptr, *sid = nullptr, *sdd = nullptr, *mu = nullptr;
  } given;
};

// Adds the CT flags to the `simulate` sub-command.
void add_ct_simulate_flags(CLI::App& sub, CtSimulateFlags& flags);

// The CT protocol of the flags, simulated by acquire's simulate_ct (which
// holds the automatic geometry). `analytic` is the phantom's component table
// when known (null for a raster-only object); `raster` [ny, nx] (the last
// slice of a stack) is its image on the reconstruction grid. With
// `analytic_truth` the sinogram comes from exact line integrals, otherwise from
// the projector applied to the raster. Bad flags throw InputError naming the flag.
Measurement simulate_ct_measurement(const CtSimulateFlags& flags,
                                    const Phantom* analytic,
                                    const NdArray<cfloat>& raster,
                                    double pixel_spacing_mm,
                                    bool analytic_truth,
                                    uint64_t seed);

// Library field paths of CT simulation ("ct.detector_count", ...) and their flags.
const std::vector<FieldFlag>& ct_simulate_flags();

}  // namespace recofold::cli
