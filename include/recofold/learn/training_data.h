// SPDX-License-Identifier: Apache-2.0
// Training examples drawn on the fly: a random phantom of a family under randomly drawn acquisition conditions.
#pragma once

#include <cstdint>

#include "recofold/core/measurement.h"
#include "recofold/learn/training_config.h"

namespace recofold {

// Example `index` of the stream with seed `seed`: every random choice comes
// from Rng::for_stream(seed, index), so an example does not depend on which
// other examples were drawn, on the batch size or on threads.
//
// Draws (TrainingConditions; family, mask and noise from a stream of (seed, index)
// apart from the object's): a family, then the object
// make_family_object(family_options(family), seed, index) with the field of
// view fov_mm -- object `index` of family seed `seed`, the object `recofold
// phantom --family F --seed seed` and a study's family phantom with that seed
// and index would use -- rasterised on [ny, nx] (the truth); then
//   MRI: pattern, acceleration, noise sigma and coils; the mask from
//     make_mask (sampling/mask.h, centre fraction `center`, its own seed) and
//     the measurement from simulate_mri (acquire/mri.h) with the configured
//     truth ("analytic": exact k-space, no inverse crime; "discrete": E x);
//   CT: views equally spaced over the arc (parallel beam, detectors
//     ceil(sqrt(2) max(ny, nx)) of one pixel, pixel fov_mm / nx) and photons
//     I0 (log-uniform), simulated by simulate_ct (acquire/ct_simulation.h)
//     with attenuation mu (0: automatic) and Poisson noise when I0 > 0.
// The result is what `recofold simulate` would write for the same settings.
// Conditions must be valid (validate()); checked.
Measurement draw_training_example(const TrainingConditions& conditions, uint64_t seed, uint64_t index);

// The truth image of draw_training_example(conditions, seed, index) alone
// (the same family and object, real-valued raster), for training image densities.
ImageF draw_training_object(const TrainingConditions& conditions, uint64_t seed, uint64_t index);

}  // namespace recofold
