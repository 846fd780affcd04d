// SPDX-License-Identifier: Apache-2.0
// Pieces shared by the trainers of unrolled models and flows (private to learn).
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "recofold/learn/training_config.h"

namespace recofold::internal {

// Learning rate of the [train] schedule at `step` (0-based), warm-up included.
double scheduled_learning_rate(const TrainOptions& o, int64_t step);

// trained_on's seed ranges of a run: training objects 0 .. steps*batch-1 of
// family seed train.seed and validation objects 0 .. validation_count-1 of
// validation_seed(train.seed), for every configured family.
std::vector<SeedRange> training_seed_ranges(const TrainingConfig& cfg, int64_t steps_done);

// The thread settings of a training run, restored when it ends (normally or
// by an exception): OpenMP threads (`threads` > 0 sets them, 0 keeps them),
// torch's intra-op threads aligned with them, and one FFT thread (examples of
// a batch run side by side instead). Training never changes the process's
// settings for whatever runs after it.
class TrainingThreadScope {
 public:
  explicit TrainingThreadScope(int threads);
  ~TrainingThreadScope();
  TrainingThreadScope(const TrainingThreadScope&) = delete;
  TrainingThreadScope& operator=(const TrainingThreadScope&) = delete;

 private:
  int omp_threads_, fft_threads_, torch_threads_;
};

}  // namespace recofold::internal
