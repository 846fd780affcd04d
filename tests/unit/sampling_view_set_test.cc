// SPDX-License-Identifier: Apache-2.0
// Tests of CT view sets: spacing, golden-angle order, angle files and the shipped protocols.
#include <gtest/gtest.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>

#include "recofold/core/error.h"
#include "recofold/sampling/view_set.h"

namespace recofold {
namespace {

namespace fs = std::filesystem;

fs::path temp_file(const std::string& name, const std::string& text) {
  const fs::path dir = fs::temp_directory_path() / ("recofold_view_set_" + std::to_string(::getpid()));
  fs::create_directories(dir);
  const fs::path p = dir / name;
  std::ofstream(p) << text;
  return p;
}

TEST(ViewSet, SparseViewsAreEquallySpacedOverHalfTurnWithoutEndPoint) {
  const auto a = equally_spaced_views(60, 180.0);
  ASSERT_EQ(a.size(), 60u);
  EXPECT_DOUBLE_EQ(a[0], 0.0);
  for (size_t i = 1; i < a.size(); ++i) EXPECT_NEAR(a[i] - a[i - 1], M_PI / 60, 1e-12);
  EXPECT_LT(a.back(), M_PI);
}

TEST(ViewSet, LimitedArcStaysInsideArc) {
  ViewSetSpec s;
  s.views = 120;
  s.arc_deg = 120.0;
  s.start_deg = 30.0;
  const auto a = make_view_set(s);
  EXPECT_NEAR(a.front(), M_PI / 6, 1e-12);
  EXPECT_LT(a.back(), 150.0 * M_PI / 180.0);
  EXPECT_NEAR(a[1] - a[0], M_PI / 180.0, 1e-12);
}

TEST(ViewSet, GoldenOrderStepsBy111Point246Degrees) {
  const auto a = golden_angle_views(30, 180.0);
  for (size_t i = 1; i < a.size(); ++i) {
    double d = std::fmod((a[i] - a[i - 1]) * 180.0 / M_PI + 360.0, 180.0);
    EXPECT_NEAR(d, 111.246, 1e-3) << i;
  }
  // Every prefix covers the arc nearly evenly: the largest gap of the first 21
  // views (a Fibonacci number) is below 2.7x the mean gap.
  std::vector<double> p(a.begin(), a.begin() + 21);
  std::sort(p.begin(), p.end());
  double gap = M_PI - p.back() + p.front();
  for (size_t i = 1; i < p.size(); ++i) gap = std::max(gap, p[i] - p[i - 1]);
  EXPECT_LT(gap, 2.7 * M_PI / 21);
}

TEST(ViewSet, ValidateListsEveryViolation) {
  ViewSetSpec s;
  s.views = 0;
  s.arc_deg = 400;
  const auto e = s.validate();
  ASSERT_EQ(e.size(), 2u);
  EXPECT_NE(e[0].find("views = 0"), std::string::npos);
  EXPECT_NE(e[1].find("arc_deg = 400"), std::string::npos);
  EXPECT_THROW(make_view_set(s), InputError);
}

TEST(ViewFile, ReadsDegreesWithCommentsAndBlankLines) {
  const auto p = temp_file("ok.txt", "# my views\n0\n\n45.5  # oblique\n90\n");
  const auto a = read_view_file(p.string());
  ASSERT_EQ(a.size(), 3u);
  EXPECT_NEAR(a[1], 45.5 * M_PI / 180.0, 1e-12);
}

TEST(ViewFile, RejectsMalformedLineNamingIt) {
  const auto p = temp_file("bad.txt", "0\n10 20\n");
  try {
    read_view_file(p.string());
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.line(), 2);
    EXPECT_EQ(e.field(), "angle");
  }
  EXPECT_THROW(read_view_file(temp_file("empty.txt", "# nothing\n").string()), InputError);
}

TEST(CtProtocol, ShippedProtocolsLoad) {
  const char* src = std::getenv("RECOFOLD_SOURCE_DIR");
  const fs::path dir = fs::path(src ? src : "..") / "sampling-masks";
  int count = 0;
  for (const auto& entry : fs::directory_iterator(dir)) {
    const std::string name = entry.path().filename().string();
    if (name.rfind("ct-", 0) != 0 || entry.path().extension() != ".toml") continue;
    const CtProtocol p = load_ct_protocol(entry.path().string());
    EXPECT_FALSE(make_view_set(p.views).empty()) << name;
    EXPECT_FALSE(p.description.empty()) << name;
    ++count;
  }
  EXPECT_GE(count, 4);
  const CtProtocol sparse = load_ct_protocol((dir / "ct-sparse-60.toml").string());
  EXPECT_EQ(sparse.views.views, 60);
  const CtProtocol limited = load_ct_protocol((dir / "ct-limited-120.toml").string());
  EXPECT_DOUBLE_EQ(limited.views.arc_deg, 120.0);
}

TEST(CtProtocol, RejectsUnknownKeyAndBadArcWithLine) {
  const auto p = temp_file("bad.toml", "kind = \"ct-views\"\nviews = 10\narc_deg = 500\n");
  try {
    load_ct_protocol(p.string());
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_NE(e.field().find("arc_deg"), std::string::npos) << e.what();
    EXPECT_EQ(e.line(), 3);
  }
  EXPECT_THROW(load_ct_protocol(temp_file("bad2.toml", "kind = \"ct-views\"\nviewz = 10\n").string()), InputError);
}

}  // namespace
}  // namespace recofold
