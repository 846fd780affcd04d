// SPDX-License-Identifier: Apache-2.0
// Held-out objects: the family objects of a study against the objects a learned model trained on.
//
// A family object is fixed by (family, family seed, index) (phantom/family.h,
// make_family_object); training draws its examples the same way and records
// the ranges it used in the model's trained_on attribute ("seeds": [{"use",
// "families", "seed", "first", "last"}, ...], learn/training_config.h). A
// study refuses (InputError, exit 2) to score a learned method on an object
// the model saw in training or validation. Models a study trains itself get a
// training seed that no family table of the study uses (study_training_seed).
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "recofold/study/study_config.h"

namespace recofold {

// The objects of one [[phantom]] family table: objects first..last of `family` with `seed`.
struct StudyObjectRange {
  int table = 0;  // position among the [[phantom]] tables
  int line = 0;   // line of its seed key (or of the table)
  std::string family;
  uint64_t seed = 0;
  uint64_t first = 0, last = 0;
  // "phantom[1] (family textured, seed 9001, objects 0..2)"
  std::string describe() const;
};

// Objects a model saw: one entry of its trained_on "seeds" list.
struct TrainedObjectRange {
  std::string use;  // "train" | "validation"
  std::vector<std::string> families;
  uint64_t seed = 0;
  uint64_t first = 0, last = 0;
  // "train: textured, seed 1, objects 0..2399"
  std::string describe() const;
};

// One range per family [[phantom]] table of the config (tables, measurements
// and image objects have none).
std::vector<StudyObjectRange> study_object_ranges(const StudyConfig& config);

// The "seeds" list of a trained_on JSON object (empty when the model does not
// record one). InputError(model_file, "/model@trained_on", ...) when the list
// is malformed.
std::vector<TrainedObjectRange> trained_object_ranges(const std::string& trained_on_json,
                                                      const std::string& model_file);

// True when the two ranges share an object (same family, same seed, indices intersect).
bool ranges_overlap(const StudyObjectRange& s, const TrainedObjectRange& t);

// Throws InputError(config file, "phantom[k].seed", line) naming both ranges,
// the model file and the method when one of the study's family objects is
// among the model's training or validation objects. A trained_on without a
// seed list (models written before it was recorded) passes: returns false;
// true when the ranges were checked.
bool check_held_out(const StudyConfig& config, const StudyMethod& method, const std::string& model_file,
                    const std::string& trained_on_json);

// The training seed of a model the study trains for `method`: drawn from the
// study seed and the method name, below 2^53, and different from the seed of
// every family table of the study, so no training object is a study object
// (never 0, which would leave the config's seed; the check after training
// covers the validation seed the trainer derives from it).
uint64_t study_training_seed(const StudyConfig& config, const StudyMethod& method);

}  // namespace recofold
