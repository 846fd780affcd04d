// SPDX-License-Identifier: Apache-2.0
// Study config and case grid: counts and keys with every axis, shards, seeds, bad configs.
#include <gtest/gtest.h>

#include <cstdlib>
#include <map>
#include <set>
#include <string>
#include <utility>
#include <vector>

#include "recofold/core/error.h"
#include "recofold/study/case_grid.h"
#include "recofold/study/case_runner.h"
#include "recofold/study/study_config.h"

namespace recofold {
namespace {

std::string source_dir() {
  const char* s = std::getenv("RECOFOLD_SOURCE_DIR");
  return s ? s : ".";
}

// Every axis with two values; three phantoms (a table and a family of two).
const char* kEveryAxis = R"(
name = "every-axis"
size = 32
repetitions = 2
seed = 3
[[phantom]]
table = "phantoms/qc-disk.toml"
[[phantom]]
family = "ellipses"
count = 2
seed = 9
[mri]
pattern = ["lines-vd", "lines-uniform"]
accel = [2, 4]
coils = [1, 4]
noise = [0.0, 0.01]
[ct]
views = [20, 40]
arc = [120, 180]
photons = [0, 1e5]
[[method]]
method = "zero-filled"
[[method]]
method = "fbp"
[[method]]
name = "fista-wavelet"
method = "fista"
prior = "wavelet"
lambda = 0.01
iters = 5
levels = 2
)";

StudyConfig every_axis() { return StudyConfig::parse(kEveryAxis, "every-axis.toml", source_dir()); }

TEST(StudyGrid, CountsEveryAxisCombination) {
  const StudyConfig c = every_axis();
  ASSERT_EQ(c.phantoms.size(), 3u);
  const CaseGrid g = expand_grid(c);
  EXPECT_EQ(g.acquisitions.size(), 16u + 8u);
  // Per phantom and repetition: 16 MRI acquisitions x 2 methods + 8 CT x 2 methods.
  EXPECT_EQ(g.cases.size(), 3u * 2u * (16u * 2u + 8u * 2u));
  EXPECT_EQ(g.groups, 3 * 2 * 24);
}

TEST(StudyGrid, KeysAreUniqueAndNameEveryAxis) {
  const CaseGrid g = expand_grid(every_axis());
  std::set<std::string> keys;
  for (const StudyCase& c : g.cases) {
    EXPECT_TRUE(keys.insert(c.key).second) << c.key;
    EXPECT_EQ(c.index, int(&c - &g.cases[0]));
  }
  EXPECT_TRUE(keys.count("qc-disk|mri/lines-uniform/R4/c4/s0.01|fista-wavelet|r1"));
  EXPECT_TRUE(keys.count("ellipses-9-1|ct/v40/a120/p100000|fbp|r0"));
  EXPECT_FALSE(keys.count("qc-disk|ct/v40/a120/p100000|zero-filled|r0")) << "zero-filled is MRI only";
  for (const Acquisition& a : g.acquisitions)
    for (const std::string& axis : acquisition_axes()) {
      const bool mri_axis = axis == "pattern" || axis == "accel" || axis == "coils" || axis == "noise";
      const bool ct_axis = axis == "views" || axis == "arc" || axis == "photons";
      const bool has = a.modality == Modality::kMri ? mri_axis : ct_axis;
      EXPECT_EQ(axis_value(a, axis).empty(), !has) << a.key() << " " << axis;
    }
}

TEST(StudyGrid, SeedsDependOnKeysNotPositions) {
  const CaseGrid g = expand_grid(every_axis());
  std::map<std::string, uint64_t> mask_of_acq_rep;
  std::set<uint64_t> mask_seeds;
  std::set<uint64_t> noise_seeds;
  for (const StudyCase& c : g.cases) {
    noise_seeds.insert(c.noise_seed);
    const Acquisition& a = g.acquisitions[size_t(c.acquisition)];
    if (a.modality != Modality::kMri) continue;
    const std::string k = a.pattern + "|" + std::to_string(a.accel) + "|" + std::to_string(c.repetition);
    auto [it, fresh] = mask_of_acq_rep.emplace(k, c.mask_seed);
    EXPECT_EQ(it->second, c.mask_seed) << "one mask per pattern, R and repetition, whatever the coils and noise";
    mask_seeds.insert(c.mask_seed);
  }
  EXPECT_EQ(mask_seeds.size(), 2u * 2u * 2u) << "patterns x accelerations x repetitions";
  EXPECT_EQ(noise_seeds.size(), size_t(g.groups)) << "one noise seed per measurement";
  // Dropping a method leaves the other cases' seeds unchanged.
  StudyConfig fewer = every_axis();
  fewer.methods.pop_back();
  const CaseGrid h = expand_grid(fewer);
  std::map<std::string, uint64_t> seeds;
  for (const StudyCase& c : g.cases) seeds[c.key] = c.noise_seed;
  for (const StudyCase& c : h.cases) EXPECT_EQ(seeds.at(c.key), c.noise_seed);
}

TEST(StudyGrid, ShardsCoverEveryCaseExactlyOnce) {
  const CaseGrid g = expand_grid(every_axis());
  for (int n = 1; n <= 7; ++n) {
    std::map<int, int> seen;
    for (int i = 1; i <= n; ++i) {
      Shard s = Shard::parse(std::to_string(i) + "/" + std::to_string(n));
      for (const StudyCase& c : g.cases)
        if (s.contains(c)) ++seen[c.index];
    }
    ASSERT_EQ(seen.size(), g.cases.size()) << "n = " << n;
    for (const auto& [index, count] : seen) EXPECT_EQ(count, 1) << "case " << index << " n = " << n;
  }
}

TEST(StudyGrid, ShardParseRejectsImpossibleShards) {
  for (const char* bad : {"3/2", "0/2", "1/0", "a/b", "2", "1/2/3", "-1/2"}) {
    try {
      Shard::parse(bad);
      ADD_FAILURE() << bad << " accepted";
    } catch (const InputError& e) {
      EXPECT_EQ(e.field(), "shard") << bad;  // the field; the CLI maps it to its flag
    }
  }
  EXPECT_EQ(Shard::parse("2/3").to_string(), "2/3");
}

std::string error_of(const std::string& text) {
  try {
    StudyConfig::parse(text, "bad.toml", source_dir());
  } catch (const InputError& e) {
    return e.field() + ": " + e.reason();
  }
  return "";
}

TEST(StudyConfigLoad, RejectsUnknownAcquisitionAxis) {
  std::string text = kEveryAxis;
  text.replace(text.find("[mri]"), 5, "[mri]\necho_time = [5, 10]");
  const std::string e = error_of(text);
  EXPECT_NE(e.find("mri.echo_time"), std::string::npos) << e;
}

TEST(StudyConfigLoad, RejectsEmptyGrids) {
  EXPECT_NE(error_of("size = 32\n[mri]\naccel = 2\n[[method]]\nmethod = \"zero-filled\"\n").find("phantom"),
            std::string::npos);
  EXPECT_NE(error_of("size = 32\n[[phantom]]\nfamily = \"ellipses\"\n[mri]\naccel = 2\n[[method]]\nmethod = \"fbp\"\n")
                .find("empty grid"),
            std::string::npos);
  EXPECT_NE(error_of("size = 32\n[[phantom]]\nfamily = \"ellipses\"\n[[method]]\nmethod = \"fbp\"\n").find("empty grid"),
            std::string::npos);
  EXPECT_NE(error_of("size = 32\n[[phantom]]\nfamily = \"ellipses\"\n[mri]\naccel = []\n[[method]]\nmethod = \"zero-filled\"\n")
                .find("mri.accel"),
            std::string::npos);
}

TEST(StudyConfigLoad, RejectsMissingModelFileByName) {
  const std::string e = error_of(
      "size = 32\n[[phantom]]\nfamily = \"ellipses\"\n[mri]\naccel = 2\n[[method]]\nmethod = \"unrolled\"\n"
      "modality = \"mri\"\nmodel = \"no-such-model.h5\"\n");
  EXPECT_NE(e.find("method[0].model"), std::string::npos) << e;
  EXPECT_NE(e.find("no-such-model.h5"), std::string::npos) << e;
}

TEST(StudyConfigLoad, RejectsBadValuesWithKey) {
  EXPECT_NE(error_of("size = 32\n[[phantom]]\nfamily = \"blobs\"\n").find("phantom[0].family"), std::string::npos);
  std::string text = kEveryAxis;
  text.replace(text.find("lambda = 0.01"), 13, "lambda = -1");
  EXPECT_NE(error_of(text).find("lambda"), std::string::npos);
  text = kEveryAxis;
  text.replace(text.find("lambda = 0.01"), 13, "lambda = \"best\"");
  EXPECT_NE(error_of(text).find("lambda"), std::string::npos);
  text = kEveryAxis;
  text.replace(text.find("lambda = 0.01"), 13, "lambda = \"auto\"");
  EXPECT_EQ(error_of(text), "") << "auto is accepted for a prior solver";
}

TEST(StudyConfigLoad, HashFollowsTheText) {
  const StudyConfig a = every_axis();
  std::string text = kEveryAxis;
  text.replace(text.find("seed = 3"), 8, "seed = 4");
  const StudyConfig b = StudyConfig::parse(text, "every-axis.toml", source_dir());
  EXPECT_EQ(a.hash, every_axis().hash);
  EXPECT_NE(a.hash, b.hash);
  EXPECT_EQ(a.hash.size(), 16u);
}

}  // namespace
}  // namespace recofold

namespace recofold {
namespace {

const char* kImageProblems = R"(
size = 32
repetitions = 2
[[phantom]]
family = "ellipses"
count = 1
[denoise]
noise = [0.05, 0.1]
[inpaint]
pattern = ["random", "blocks"]
keep = [0.3, 0.6]
noise = [0, 0.01]
block = 4
[[method]]
method = "zero-filled"
[[method]]
method = "fbp"
[[method]]
method = "fista"
prior = "tv"
lambda = 0.01
iters = 5
)";

TEST(StudyGrid, DenoiseAndInpaintAxesExpandWithTheirMethods) {
  const StudyConfig c = StudyConfig::parse(kImageProblems, "images.toml", source_dir());
  ASSERT_TRUE(c.denoise && c.inpaint);
  EXPECT_FALSE(c.mri || c.ct);
  EXPECT_EQ(c.inpaint->block_size, 4);
  const CaseGrid g = expand_grid(c);
  ASSERT_EQ(g.acquisitions.size(), 2u + 2u * 2u * 2u);
  EXPECT_EQ(g.acquisitions[0].key(), "denoise/s0.05");
  EXPECT_EQ(g.acquisitions[2].key(), "inpaint/random/k0.3/s0");
  EXPECT_EQ(axis_value(g.acquisitions[2], "keep"), "0.3");
  EXPECT_EQ(axis_value(g.acquisitions[0], "keep"), "") << "keep is an inpainting axis only";
  // zero-filled and fista run on both image problems, fbp on neither.
  EXPECT_EQ(g.cases.size(), size_t(10 * 2 * 2));
  for (const StudyCase& cs : g.cases) EXPECT_NE(c.methods[size_t(cs.method)].name, "fbp");
}

TEST(StudyGrid, InpaintPixelsNestAcrossKeepAndAreSharedAcrossNoise) {
  const StudyConfig c = StudyConfig::parse(kImageProblems, "images.toml", source_dir());
  const CaseGrid g = expand_grid(c);
  // pattern|repetition -> (keep, noise) -> kept pixels
  std::map<std::string, std::map<std::pair<double, double>, std::vector<uint8_t>>> masks;
  std::set<uint64_t> seeds;
  for (const StudyCase& cs : g.cases) {
    const Acquisition& a = g.acquisitions[size_t(cs.acquisition)];
    if (a.modality != Modality::kInpaint || c.methods[size_t(cs.method)].name != "zero-filled") continue;
    seeds.insert(cs.mask_seed);
    const CaseMeasurement m =
        simulate_case_measurement(c, c.phantoms[size_t(cs.phantom)], a, cs.mask_seed, cs.noise_seed);
    ASSERT_TRUE(m.measurement.image);
    masks[a.pattern + "|" + std::to_string(cs.repetition)][{a.keep, a.noise}] =
        m.measurement.image->pixel_mask.data;
  }
  EXPECT_EQ(seeds.size(), 2u * 2u) << "one pixel pattern per pattern and repetition";
  ASSERT_EQ(masks.size(), 4u);
  for (const auto& [key, by] : masks) {
    EXPECT_EQ(by.at({0.3, 0.0}), by.at({0.3, 0.01})) << key << ": noise levels share the pixels";
    const auto& small = by.at({0.3, 0.0});
    const auto& large = by.at({0.6, 0.0});
    size_t ns = 0, nl = 0;
    for (size_t p = 0; p < small.size(); ++p) {
      EXPECT_LE(small[p], large[p]) << key << ": pixel " << p << " kept at 0.3 but not at 0.6";
      ns += small[p];
      nl += large[p];
    }
    EXPECT_NEAR(double(ns) / double(small.size()), 0.3, 0.1) << key;
    EXPECT_NEAR(double(nl) / double(large.size()), 0.6, 0.1) << key;
  }
  EXPECT_NE(masks.at("random|0").at({0.3, 0.0}), masks.at("random|1").at({0.3, 0.0}))
      << "repetitions draw new pixels";
}

TEST(StudyConfigLoad, ImageProblemAndKeepErrorsNameTheirKeys) {
  auto with = [](const std::string& from, const std::string& to) {
    std::string t = kImageProblems;
    t.replace(t.find(from), from.size(), to);
    return t;
  };
  EXPECT_NE(error_of(with("keep = [0.3, 0.6]", "keep = [0.3, 1.5]")).find("inpaint.keep"), std::string::npos)
      << error_of(with("keep = [0.3, 0.6]", "keep = [0.3, 1.5]"));
  EXPECT_NE(error_of(with("keep = [0.3, 0.6]", "keep = [0]")).find("inpaint.keep"), std::string::npos);
  EXPECT_NE(error_of(with("noise = [0.05, 0.1]", "noise = [-0.1]")).find("denoise.noise"), std::string::npos);
  EXPECT_NE(error_of(with("\"random\", \"blocks\"", "\"file\"")).find("inpaint.pattern"), std::string::npos);
  EXPECT_NE(error_of(with("block = 4", "block = 0")).find("inpaint.block"), std::string::npos);
  EXPECT_NE(error_of(with("block = 4", "stride = 4")).find("stride"), std::string::npos);
  EXPECT_NE(error_of("keep = \"some\"\n" + std::string(kImageProblems)).find("keep"), std::string::npos);
  EXPECT_EQ(error_of("keep = \"all\"\n" + std::string(kImageProblems)), "");
  EXPECT_TRUE(StudyConfig::parse("keep = \"all\"\n" + std::string(kImageProblems), "k.toml", source_dir()).keep_all);
  // A method restricted to an image problem.
  EXPECT_EQ(error_of(with("method = \"zero-filled\"", "method = \"zero-filled\"\nmodality = \"inpaint\"")), "");
  EXPECT_NE(error_of(with("method = \"fbp\"", "method = \"fbp\"\nmodality = \"denoise\"")).find("modality"),
            std::string::npos);
  // Learned models train for image problems too: an unrolled denoise method is refused only for
  // lacking its model or training config.
  const std::string unrolled = error_of(with("method = \"fbp\"", "method = \"unrolled\"\nmodality = \"denoise\""));
  EXPECT_EQ(unrolled.find("modality"), std::string::npos) << unrolled;
  EXPECT_NE(unrolled.find("model or train"), std::string::npos) << unrolled;
}

}  // namespace
}  // namespace recofold
