// SPDX-License-Identifier: Apache-2.0
// Core: RNG reproducibility and distributions, TOML errors, atomic writes, shapes.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <fstream>
#include <sys/wait.h>
#include <unistd.h>

#include "recofold/core/atomic_file.h"
#include "recofold/core/checks.h"
#include "recofold/core/config.h"
#include "recofold/core/error.h"
#include "recofold/core/field_error.h"
#include "recofold/core/hash.h"
#include "recofold/core/measurement.h"
#include "recofold/core/number_format.h"
#include "recofold/core/progress.h"
#include "recofold/core/rng.h"

using namespace recofold;

namespace {
std::string temp_dir() {
  char tmpl[] = "/tmp/recofold-core-XXXXXX";
  return mkdtemp(tmpl);
}
}  // namespace

TEST(Rng, SameSeedGivesSameSequenceAndKnownFirstValue) {
  Rng a(42), b(42), c(43);
  std::vector<uint64_t> va, vb, vc;
  for (int i = 0; i < 100; ++i) {
    va.push_back(a.next_u64());
    vb.push_back(b.next_u64());
    vc.push_back(c.next_u64());
  }
  EXPECT_EQ(va, vb);
  EXPECT_NE(va, vc);
}

TEST(Rng, StreamsAreIndependentOfParentState) {
  Rng s1 = Rng::for_stream(7, 3), s2 = Rng::for_stream(7, 3), s3 = Rng::for_stream(7, 4);
  EXPECT_EQ(s1.next_u64(), s2.next_u64());
  EXPECT_NE(Rng::for_stream(7, 3).next_u64(), s3.next_u64());
}

TEST(Rng, UniformAndNormalMomentsMatch) {
  Rng r(1);
  const int n = 400000;
  double su = 0, sn = 0, sn2 = 0;
  for (int i = 0; i < n; ++i) {
    const double u = r.uniform();
    ASSERT_GE(u, 0.0);
    ASSERT_LT(u, 1.0);
    su += u;
    const double g = r.normal();
    sn += g;
    sn2 += g * g;
  }
  EXPECT_NEAR(su / n, 0.5, 3e-3);
  EXPECT_NEAR(sn / n, 0.0, 6e-3);
  EXPECT_NEAR(sn2 / n, 1.0, 1e-2);
}

TEST(Rng, PoissonMeanAndVarianceMatchLambdaInBothRegimes) {
  for (double lambda : {3.5, 25.0, 400.0, 1e5}) {
    Rng r(11);
    const int n = 200000;
    double s = 0, s2 = 0;
    for (int i = 0; i < n; ++i) {
      const double k = static_cast<double>(r.poisson(lambda));
      s += k;
      s2 += k * k;
    }
    const double mean = s / n, var = s2 / n - mean * mean;
    EXPECT_NEAR(mean / lambda, 1.0, 0.01) << "lambda " << lambda;
    EXPECT_NEAR(var / lambda, 1.0, 0.03) << "lambda " << lambda;
  }
}

TEST(Rng, BelowIsInRangeAndCoversAllValues) {
  Rng r(5);
  std::vector<int> hits(7, 0);
  for (int i = 0; i < 7000; ++i) {
    const uint64_t v = r.below(7);
    ASSERT_LT(v, 7u);
    hits[v]++;
  }
  for (int h : hits) EXPECT_GT(h, 800);
}

TEST(Config, ReadsTypedValuesAndNestedTables) {
  Config c = Config::parse("a = 1.5\nb = 3\nname = \"x\"\nflag = true\nlist = [1, 2.5]\n[sec]\nk = 2\n", "t.toml");
  EXPECT_DOUBLE_EQ(c.get_double("a"), 1.5);
  EXPECT_DOUBLE_EQ(c.get_double("b"), 3.0);  // integers promote to double
  EXPECT_EQ(c.get_int("b"), 3);
  EXPECT_EQ(c.get_string("name"), "x");
  EXPECT_TRUE(c.get_bool("flag"));
  EXPECT_EQ(c.get_double_list("list"), (std::vector<double>{1.0, 2.5}));
  EXPECT_EQ(c.table("sec").get_int("k"), 2);
  EXPECT_EQ(c.get_double_or("missing", 9.0), 9.0);
}

TEST(Config, WrongTypeNamesFileLineAndDottedKey) {
  Config c = Config::parse("[acq]\n\naccel = \"four\"\n", "study.toml");
  try {
    c.table("acq").get_double("accel");
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), "study.toml");
    EXPECT_EQ(e.field(), "acq.accel");
    EXPECT_EQ(e.line(), 3);
    EXPECT_NE(std::string(e.what()).find("expected a number"), std::string::npos);
  }
}

TEST(Config, UnknownKeyIsRejectedWithItsLine) {
  Config c = Config::parse("size = 3\ncolour = 1\n", "p.toml");
  try {
    c.expect_only({"size"});
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "colour");
    EXPECT_EQ(e.line(), 2);
  }
}

TEST(Config, SyntaxErrorCarriesLine) {
  try {
    Config::parse("a = 1\nb = = 2\n", "bad.toml");
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.line(), 2);
    EXPECT_EQ(e.file(), "bad.toml");
  }
}

TEST(Config, ArrayOfTablesIsListed) {
  Config c = Config::parse("[[ellipse]]\na = 1\n[[ellipse]]\na = 2\n", "t.toml");
  auto v = c.tables("ellipse");
  ASSERT_EQ(v.size(), 2u);
  EXPECT_EQ(v[1].get_int("a"), 2);
  EXPECT_EQ(v[1].dotted("a"), "ellipse[1].a");
  EXPECT_TRUE(c.tables("blob").empty());
}

TEST(AtomicFile, UncommittedWriteLeavesNothingBehind) {
  const std::string dir = temp_dir();
  const std::string target = dir + "/out.txt";
  {
    AtomicFile f(target);
    std::ofstream(f.temp_path()) << "partial";
    EXPECT_TRUE(file_exists(f.temp_path()));
  }
  EXPECT_FALSE(file_exists(target));
  write_text_atomic(target, "whole");
  EXPECT_EQ(read_text_file(target), "whole");
  // Only the target remains in the folder.
  EXPECT_EQ(std::system(("test $(ls -A " + dir + " | wc -l) -eq 1").c_str()), 0);
}

TEST(AtomicFile, CommitRemovesTemporariesOfDeadWritersOnly) {
  const std::string dir = temp_dir();
  const std::string target = dir + "/model.h5";
  // A process that has exited: its pid is free (reaped) and not ours.
  const pid_t child = fork();
  if (child == 0) _exit(0);
  int status = 0;
  waitpid(child, &status, 0);
  const std::string dead = std::to_string(child), alive = std::to_string(getppid());
  const std::string orphan1 = dir + "/.model.h5.tmp-" + dead + "-4";
  const std::string orphan2 = dir + "/.tmp-" + dead + "-0-model.h5";
  const std::string live = dir + "/.model.h5.tmp-" + alive + "-1";      // a writer that still runs
  const std::string other = dir + "/.other.h5.tmp-" + dead + "-2";      // another target's
  const std::string lookalike = dir + "/.model.h5.tmp-" + dead + "-x";  // not our pattern
  for (const auto& p : {orphan1, orphan2, live, other, lookalike}) std::ofstream(p) << "x";
  write_text_atomic(target, "whole");
  EXPECT_FALSE(file_exists(orphan1));
  EXPECT_FALSE(file_exists(orphan2));
  EXPECT_TRUE(file_exists(live));
  EXPECT_TRUE(file_exists(other));
  EXPECT_TRUE(file_exists(lookalike));
  EXPECT_EQ(remove_orphaned_temporaries(dir + "/other.h5"), 1);
  EXPECT_FALSE(file_exists(other));
  EXPECT_EQ(remove_orphaned_temporaries(target), 0);
}

TEST(FileExtension, RecognisesCompoundNiftiExtension) {
  EXPECT_EQ(file_extension("a/b/scan.NII.gz"), ".nii.gz");
  EXPECT_EQ(file_extension("x.h5"), ".h5");
  EXPECT_EQ(file_extension("noext"), "");
}

TEST(Checks, NonFiniteValueIsNamedWithItsIndex) {
  std::vector<float> v = {1.f, 2.f, NAN};
  try {
    require_finite(v.data(), 3, "img.h5", "/image");
    FAIL();
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("flat index 2"), std::string::npos);
    EXPECT_EQ(e.field(), "/image");
  }
  EXPECT_THROW(require_shape(Shape{2, 3}, Shape{3, 2}, "f", "/x"), InputError);
  EXPECT_EQ((Shape{8, 256, 255}).to_string(), "[8, 256, 255]");
}

TEST(StreamProgress, LinesModeReportsTimeLeft) {
  // Time-left rules in detail: tests/unit/core_progress_test.cc.
  std::ostringstream os;
  double t = 0.0;
  StreamProgress p(os, "train", ProgressMode::kLines, 0.0, [&t] { return t; });
  for (int k = 1; k <= 10; ++k) {
    t += 0.5;
    p.update(k, 10, "loss 1");
  }
  p.finish("ok");
  const std::string s = os.str();
  EXPECT_NE(s.find("left"), std::string::npos);
  EXPECT_NE(s.find("10/10 done in"), std::string::npos);
}

TEST(FieldError, ParsesOptionMessagesAndPrefixesThePath) {
  const FieldError a = parse_field_message("levels = 9; must be 1..6 for 64x64", "prior.wavelet.");
  EXPECT_EQ(a.field, "prior.wavelet.levels");
  EXPECT_EQ(a.value, "9");
  EXPECT_EQ(a.rule, "must be 1..6 for 64x64");
  EXPECT_EQ(a.text(), "prior.wavelet.levels = 9; must be 1..6 for 64x64");
  const FieldError b = parse_field_message("first_angle_rad must be finite", "mri.");
  EXPECT_EQ(b.field, "mri.first_angle_rad");
  EXPECT_EQ(b.value, "");
  EXPECT_EQ(b.rule, "must be finite");
  EXPECT_EQ(b.text(), "mri.first_angle_rad: must be finite");
}

TEST(FieldError, InvalidFieldsListsEveryViolationWithFileAndLine) {
  const InvalidFields e({{"method[2].lambda", "-1", "must be >= 0 or \"auto\""}, {"method[2].iters", "0", "must be >= 1"}},
                        "configs/x.toml", 31);
  EXPECT_STREQ(e.what(), "configs/x.toml:31: method[2].lambda = -1; must be >= 0 or \"auto\"; method[2].iters = 0; "
                         "must be >= 1");
  EXPECT_EQ(e.field(), "method[2].lambda");
  EXPECT_EQ(e.file(), "configs/x.toml");
  EXPECT_EQ(e.line(), 31);
  EXPECT_EQ(e.errors().size(), 2u);
  const InputError& base = e;  // caught as InputError, the message stays the same
  EXPECT_STREQ(base.what(), e.what());
  EXPECT_NO_THROW(throw_if_invalid({}));
  EXPECT_THROW(throw_if_invalid({{"a", "1", "no"}}), InvalidFields);
}

TEST(MeasurementNames, EveryEnumRoundTripsThroughItsName) {
  for (Modality m : all_modalities()) EXPECT_EQ(parse_modality(to_string(m)), m);
  EXPECT_EQ(accepted_modalities(), "mri, ct, denoise, inpaint");
  EXPECT_FALSE(parse_modality("pet").has_value());
  for (CtBeam b : {CtBeam::kParallel, CtBeam::kFan}) EXPECT_EQ(parse_ct_beam(to_string(b)), b);
  for (FanDetector d : {FanDetector::kFlat, FanDetector::kEquiangular}) EXPECT_EQ(parse_fan_detector(to_string(d)), d);
  EXPECT_FALSE(parse_ct_beam("cone").has_value());
}

TEST(NumberFormat, ShortestTextReadsBackExactly) {
  EXPECT_EQ(format_number(4.0), "4");
  EXPECT_EQ(format_number(0.01), "0.01");
  EXPECT_EQ(format_number(1e5), "100000");
  EXPECT_EQ(format_number(0.1 + 0.2), "0.30000000000000004");
  EXPECT_EQ(format_number(std::nan("")), "nan");
  EXPECT_EQ(format_sig(3.14159, 3), "3.14");
}

TEST(Hash, Fnv1aMatchesPublishedTestVectors) {
  // FNV-1a 64-bit test vectors (Fowler/Noll/Vo reference list, from memory): "" and "a".
  EXPECT_EQ(fnv1a(std::string()), 0xcbf29ce484222325ull);
  EXPECT_EQ(fnv1a(std::string("a")), 0xaf63dc4c8601ec8cull);
  EXPECT_EQ(fnv1a_hex("a"), "af63dc4c8601ec8c");
  const std::string text = "hello world";
  EXPECT_EQ(fnv1a(text.data() + 5, text.size() - 5, fnv1a(text.data(), 5)), fnv1a(text));
}
