// SPDX-License-Identifier: Apache-2.0
// Held-out objects: study family ranges, trained_on seed lists, overlaps and the study's own training seeds.
#include <gtest/gtest.h>

#include <cstdlib>
#include <string>

#include "recofold/core/error.h"
#include "recofold/study/held_out.h"
#include "recofold/study/study_config.h"

namespace recofold {
namespace {

std::string source_dir() {
  const char* s = std::getenv("RECOFOLD_SOURCE_DIR");
  return s ? s : ".";
}

// A table phantom, then two family tables: textured seed 9 objects 0..2, ellipses seed 4 objects 0..1.
StudyConfig config_with(const std::string& method_name = "net") {
  const std::string text = R"(
size = 32
seed = 4
[[phantom]]
table = "phantoms/qc-disk.toml"
[[phantom]]
family = "textured"
count = 3
seed = 9
[[phantom]]
family = "ellipses"
count = 2
[mri]
accel = 2
[[method]]
name = ")" + method_name + R"("
method = "zero-filled"
)";
  return StudyConfig::parse(text, "held.toml", source_dir());
}

std::string trained_on(const std::string& seeds) {
  return R"({"modality": "mri", "size": [32, 32], "families": ["textured"], "seeds": )" + seeds + "}";
}

TEST(StudyHeldOut, RangesPerFamilyTable) {
  const auto r = study_object_ranges(config_with());
  ASSERT_EQ(r.size(), 2u);
  EXPECT_EQ(r[0].table, 1);
  EXPECT_EQ(r[0].family, "textured");
  EXPECT_EQ(r[0].seed, 9u);
  EXPECT_EQ(r[0].first, 0u);
  EXPECT_EQ(r[0].last, 2u);
  EXPECT_EQ(r[0].line, 9);   // the seed key's line
  EXPECT_EQ(r[1].table, 2);
  EXPECT_EQ(r[1].seed, 4u);  // default: the study seed
  EXPECT_EQ(r[1].last, 1u);
  EXPECT_EQ(r[0].describe(), "phantom[1] (family textured, seed 9, objects 0..2)");
}

TEST(StudyHeldOut, OverlapNeedsFamilySeedAndIndices) {
  StudyObjectRange s;
  s.family = "textured";
  s.seed = 9;
  s.first = 0;
  s.last = 2;
  TrainedObjectRange t{"train", {"ellipses", "textured"}, 9, 2, 100};
  EXPECT_TRUE(ranges_overlap(s, t));  // shares object 2
  t.first = 3;
  EXPECT_FALSE(ranges_overlap(s, t));  // indices disjoint
  t.first = 0;
  t.seed = 10;
  EXPECT_FALSE(ranges_overlap(s, t));  // other seed
  t.seed = 9;
  t.families = {"ellipses"};
  EXPECT_FALSE(ranges_overlap(s, t));  // other family
}

TEST(StudyHeldOut, OverlapIsAnInputErrorNamingBothRanges) {
  const StudyConfig c = config_with();
  const StudyMethod& m = c.methods.front();
  const std::string json = trained_on(
      R"([{"use": "train", "families": ["textured"], "seed": 9, "first": 0, "last": 2399},)"
      R"( {"use": "validation", "families": ["textured"], "seed": 77, "first": 0, "last": 15}])");
  try {
    check_held_out(c, m, "models/m.h5", json);
    FAIL() << "overlap not refused";
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), "held.toml");
    EXPECT_EQ(e.field(), "phantom[1].seed");
    EXPECT_EQ(e.line(), 9);
    const std::string w = e.what();
    EXPECT_NE(w.find("phantom[1] (family textured, seed 9, objects 0..2)"), std::string::npos) << w;
    EXPECT_NE(w.find("models/m.h5"), std::string::npos) << w;
    EXPECT_NE(w.find("train: textured, seed 9, objects 0..2399"), std::string::npos) << w;
    EXPECT_NE(w.find("'net'"), std::string::npos) << w;
  }
  // The validation range counts too.
  const std::string val = trained_on(
      R"([{"use": "validation", "families": ["ellipses", "textured"], "seed": 4, "first": 1, "last": 1}])");
  EXPECT_THROW(check_held_out(c, m, "m.h5", val), InputError);
  // Disjoint ranges pass and say they were checked.
  const std::string apart =
      trained_on(R"([{"use": "train", "families": ["textured"], "seed": 1, "first": 0, "last": 2399}])");
  EXPECT_TRUE(check_held_out(c, m, "m.h5", apart));
  // No seed list (older model files): nothing to check.
  EXPECT_FALSE(check_held_out(c, m, "m.h5", R"({"modality": "mri"})"));
  EXPECT_FALSE(check_held_out(c, m, "m.h5", ""));
}

TEST(StudyHeldOut, MalformedSeedListNamesTheModel) {
  const StudyConfig c = config_with();
  const std::string bad = trained_on(R"([{"use": "train", "families": ["textured"], "seed": -1, "first": 0, "last": 1}])");
  try {
    check_held_out(c, c.methods.front(), "models/m.h5", bad);
    FAIL() << "negative seed accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), "models/m.h5");
    EXPECT_EQ(e.field(), "/model@trained_on");
  }
  EXPECT_THROW(trained_object_ranges(trained_on(R"([{"use": "train", "families": ["textured"], "seed": 1,)"
                                                R"( "first": 5, "last": 1}])"),
                                     "m.h5"),
               InputError);
}

TEST(StudyHeldOut, OwnTrainingSeedAvoidsEveryFamilySeed) {
  StudyConfig c = config_with();
  const StudyMethod& m = c.methods.front();
  const uint64_t seed = study_training_seed(c, m);
  EXPECT_GT(seed, 0u);
  EXPECT_LT(seed, uint64_t{1} << 53);
  EXPECT_EQ(seed, study_training_seed(c, m));  // deterministic
  // Force a collision: a family table with exactly that seed moves the training seed off it.
  for (StudyPhantom& p : c.phantoms)
    if (p.table == 1) p.family_seed = seed;
  const uint64_t moved = study_training_seed(c, m);
  EXPECT_NE(moved, seed);
  for (const StudyObjectRange& r : study_object_ranges(c)) EXPECT_NE(r.seed, moved);
  // A model trained with it on the study's families never overlaps the study's objects.
  const std::string json = trained_on(R"([{"use": "train", "families": ["textured", "ellipses"], "seed": )" +
                                      std::to_string(moved) + R"(, "first": 0, "last": 100000}])");
  EXPECT_TRUE(check_held_out(c, m, "m.h5", json));
  // Another method name gives another seed.
  const StudyConfig other = config_with("other");
  EXPECT_NE(study_training_seed(other, other.methods.front()), study_training_seed(config_with(), m));
}

}  // namespace
}  // namespace recofold
