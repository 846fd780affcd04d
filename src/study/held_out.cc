// SPDX-License-Identifier: Apache-2.0
// Held-out objects: study family ranges against a model's trained_on seed ranges.
#include "recofold/study/held_out.h"

#include <algorithm>
#include <cmath>

#include "recofold/core/error.h"
#include "recofold/core/json.h"
#include "recofold/core/rng.h"
#include "study_util.h"

namespace recofold {

namespace {

std::string index_range(uint64_t first, uint64_t last) {
  return first == last ? "object " + std::to_string(first)
                       : "objects " + std::to_string(first) + ".." + std::to_string(last);
}

std::string joined(const std::vector<std::string>& v) {
  std::string out;
  for (size_t i = 0; i < v.size(); ++i) out += (i ? "/" : "") + v[i];
  return out;
}

constexpr double kMaxExact = 9007199254740991.0;  // 2^53 - 1: JSON numbers hold whole numbers exactly up to here

TrainedObjectRange trained_range_of(const JsonValue& item, const std::string& file, const std::string& field) {
  if (item.kind != JsonValue::Kind::kObject) throw InputError(file, field, "'seeds' must list objects");
  auto whole = [&](const char* key) {
    const JsonValue* x = item.find(key);
    if (!x || x->kind != JsonValue::Kind::kNumber || x->number < 0 || x->number != std::floor(x->number) ||
        x->number > kMaxExact)
      throw InputError(file, field, std::string("seeds: '") + key + "' must be a whole number in 0..2^53-1");
    return static_cast<uint64_t>(x->number);
  };
  TrainedObjectRange r;
  const JsonValue* use = item.find("use");
  if (!use || use->kind != JsonValue::Kind::kString) throw InputError(file, field, "seeds: 'use' must be a string");
  r.use = use->text;
  const JsonValue* fam = item.find("families");
  if (!fam || fam->kind != JsonValue::Kind::kArray) throw InputError(file, field, "seeds: 'families' must be a list");
  for (const JsonValue& f : fam->items) {
    if (f.kind != JsonValue::Kind::kString) throw InputError(file, field, "seeds: 'families' must list names");
    r.families.push_back(f.text);
  }
  r.seed = whole("seed");
  r.first = whole("first");
  r.last = whole("last");
  if (r.last < r.first) throw InputError(file, field, "seeds: 'last' must not be below 'first'");
  return r;
}

}  // namespace

std::string StudyObjectRange::describe() const {
  return "phantom[" + std::to_string(table) + "] (family " + family + ", seed " + std::to_string(seed) + ", " +
         index_range(first, last) + ")";
}

std::string TrainedObjectRange::describe() const {
  return use + ": " + joined(families) + ", seed " + std::to_string(seed) + ", " + index_range(first, last);
}

std::vector<StudyObjectRange> study_object_ranges(const StudyConfig& config) {
  std::vector<StudyObjectRange> out;
  for (const StudyPhantom& p : config.phantoms) {
    if (p.family.empty()) continue;
    const uint64_t index = static_cast<uint64_t>(p.family_index);
    if (!out.empty() && out.back().table == p.table) {
      out.back().first = std::min(out.back().first, index);
      out.back().last = std::max(out.back().last, index);
      continue;
    }
    StudyObjectRange r;
    r.table = p.table;
    r.line = p.line;
    r.family = p.family;
    r.seed = p.family_seed;
    r.first = r.last = index;
    out.push_back(r);
  }
  return out;
}

std::vector<TrainedObjectRange> trained_object_ranges(const std::string& trained_on_json,
                                                      const std::string& model_file) {
  std::vector<TrainedObjectRange> out;
  if (trained_on_json.empty()) return out;
  const std::string field = "/model@trained_on";
  const JsonValue root = parse_json(trained_on_json, model_file, field);
  const JsonValue* seeds = root.find("seeds");
  if (!seeds) return out;
  if (seeds->kind != JsonValue::Kind::kArray) throw InputError(model_file, field, "key 'seeds' must be a list");
  for (const JsonValue& item : seeds->items) out.push_back(trained_range_of(item, model_file, field));
  return out;
}

bool ranges_overlap(const StudyObjectRange& s, const TrainedObjectRange& t) {
  if (s.seed != t.seed) return false;
  if (std::find(t.families.begin(), t.families.end(), s.family) == t.families.end()) return false;
  return s.first <= t.last && t.first <= s.last;
}

bool check_held_out(const StudyConfig& config, const StudyMethod& method, const std::string& model_file,
                    const std::string& trained_on_json) {
  const std::vector<TrainedObjectRange> trained = trained_object_ranges(trained_on_json, model_file);
  if (trained.empty()) return false;
  for (const StudyObjectRange& s : study_object_ranges(config))
    for (const TrainedObjectRange& t : trained)
      if (ranges_overlap(s, t))
        throw InputError(config.file, "phantom[" + std::to_string(s.table) + "].seed",
                         s.describe() + " overlaps the objects model '" + model_file + "' of method '" +
                             method.name + "' was trained on (" + t.describe() +
                             "); study objects must be held out: give this [[phantom]] table another seed",
                         s.line);
  return true;
}

uint64_t study_training_seed(const StudyConfig& config, const StudyMethod& method) {
  Rng rng = Rng::for_stream(config.seed, fnv1a("training seed|" + method.name));
  uint64_t seed = rng.next_u64() >> 11;  // below 2^53
  const std::vector<StudyObjectRange> ranges = study_object_ranges(config);
  auto used = [&](uint64_t s) {
    return std::any_of(ranges.begin(), ranges.end(), [&](const StudyObjectRange& r) { return r.seed == s; });
  };
  while (seed == 0 || used(seed)) seed = (seed + 1) & ((uint64_t{1} << 53) - 1);
  return seed;
}

}  // namespace recofold
