// SPDX-License-Identifier: Apache-2.0
// Tests of phantom TOML tables (bad input names file, line, key) and the numeric component table.
#include <gtest/gtest.h>

#include <functional>

#include "phantom_test_util.h"
#include "recofold/core/error.h"
#include "recofold/phantom/phantom_table.h"

namespace recofold {
namespace {

// Runs `f`, which must throw InputError, and returns it.
InputError expect_input_error(const std::function<void()>& f) {
  try {
    f();
  } catch (const InputError& e) {
    return e;
  }
  ADD_FAILURE() << "no InputError thrown";
  return InputError("", "", "");
}

const char* kGood = R"(name = "two"
fov_mm = 200
phase0_deg = 90

[[ellipse]]
intensity = 1.0
a = 0.5
b = 0.25
x0 = 0.1
phi_deg = 30

[[blob]]
intensity = [0.5, -0.5]
a = 0.1
b = 0.05
y0 = -0.2
)";

TEST(PhantomTable, ParsesEllipsesAndBlobsInFileOrder) {
  const Phantom p = parse_phantom_table(kGood, "two.toml");
  EXPECT_EQ(p.name, "two");
  EXPECT_EQ(p.fov_mm, 200.0);
  EXPECT_NEAR(p.phase0_rad, 3.14159265358979323846 / 2, 1e-15);
  ASSERT_EQ(p.components.size(), 2u);
  EXPECT_EQ(p.components[0].kind, ComponentKind::kEllipse);
  EXPECT_EQ(p.components[0].phi_deg, 30.0);
  EXPECT_EQ(p.components[0].y0, 0.0);
  EXPECT_EQ(p.components[1].kind, ComponentKind::kGaussian);
  EXPECT_EQ(p.components[1].intensity, cdouble(0.5, -0.5));
  EXPECT_TRUE(p.is_complex());
  EXPECT_TRUE(p.validate().empty());
}

TEST(PhantomTable, LoadsEveryTableInPhantomsFolder) {
  for (const char* name : {"shepp-logan", "shepp-logan-modified", "qc-disk", "organ-section"}) {
    const Phantom p = testing::load_repo_phantom(name);
    EXPECT_EQ(p.name, name);
    EXPECT_TRUE(p.validate().empty()) << name;
    EXPECT_FALSE(p.description.empty()) << name;
  }
  EXPECT_EQ(testing::load_repo_phantom("shepp-logan").components.size(), 10u);
  EXPECT_GE(testing::load_repo_phantom("organ-section").components.size(), 100u);
}

TEST(PhantomTable, RejectsUnknownComponentTypeNamingFileLineAndKey) {
  const std::string text = "name = \"x\"\n[[ellipse]]\nintensity = 1\na = 0.1\nb = 0.1\n[[rectangle]]\nintensity = 1\n";
  const InputError e = expect_input_error([&] { parse_phantom_table(text, "bad.toml"); });
  EXPECT_EQ(e.file(), "bad.toml");
  EXPECT_EQ(e.field(), "rectangle");
  EXPECT_EQ(e.line(), 6);
  EXPECT_NE(std::string(e.what()).find("unknown component type"), std::string::npos) << e.what();
}

TEST(PhantomTable, RejectsNegativeAxisNamingFileLineAndKey) {
  const std::string text = "[[ellipse]]\nintensity = 1\na = 0.1\nb = 0.1\n\n[[ellipse]]\nintensity = 1\na = 0.1\nb = -0.2\n";
  const InputError e = expect_input_error([&] { parse_phantom_table(text, "neg.toml"); });
  EXPECT_EQ(e.file(), "neg.toml");
  EXPECT_EQ(e.field(), "ellipse[1].b");
  EXPECT_EQ(e.line(), 9);
  EXPECT_NE(std::string(e.what()).find("must be > 0"), std::string::npos) << e.what();
  const InputError zero = expect_input_error([] { parse_phantom_table("[[blob]]\nintensity = 1\na = 0\nb = 1\n", "z.toml"); });
  EXPECT_EQ(zero.field(), "blob[0].a");
}

TEST(PhantomTable, RejectsMissingIntensityNamingFileLineAndKey) {
  const std::string text = "name = \"m\"\n\n[[blob]]\na = 0.1\nb = 0.1\n";
  const InputError e = expect_input_error([&] { parse_phantom_table(text, "miss.toml"); });
  EXPECT_EQ(e.field(), "blob[0].intensity");
  EXPECT_EQ(e.line(), 3);  // the [[blob]] header
  EXPECT_NE(std::string(e.what()).find("miss.toml:3"), std::string::npos) << e.what();
}

TEST(PhantomTable, RejectsTableWithoutComponents) {
  const InputError e = expect_input_error([] { parse_phantom_table("name = \"empty\"\nfov_mm = 100\n", "empty.toml"); });
  EXPECT_EQ(e.file(), "empty.toml");
  EXPECT_GE(e.line(), 1);
  EXPECT_NE(std::string(e.what()).find("no components"), std::string::npos) << e.what();
}

TEST(PhantomTable, RejectsUnknownKeysAndBadValues) {
  EXPECT_EQ(expect_input_error([] { parse_phantom_table("[[ellipse]]\nintensity = 1\na = 1\nb = 1\nradius = 2\n", "k.toml"); }).field(),
            "ellipse[0].radius");
  EXPECT_EQ(expect_input_error([] { parse_phantom_table("colour = 1\n[[ellipse]]\nintensity = 1\na = 1\nb = 1\n", "k.toml"); }).field(),
            "colour");
  EXPECT_EQ(expect_input_error([] { parse_phantom_table("[[ellipse]]\nintensity = [1, 2, 3]\na = 1\nb = 1\n", "k.toml"); }).field(),
            "ellipse[0].intensity");
  EXPECT_EQ(expect_input_error([] { parse_phantom_table("[[ellipse]]\nintensity = \"high\"\na = 1\nb = 1\n", "k.toml"); }).field(),
            "ellipse[0].intensity");
  EXPECT_EQ(expect_input_error([] { parse_phantom_table("[[ellipse]]\nintensity = nan\na = 1\nb = 1\n", "k.toml"); }).field(),
            "ellipse[0].intensity");
  EXPECT_EQ(expect_input_error([] { parse_phantom_table("fov_mm = -1\n[[ellipse]]\nintensity = 1\na = 1\nb = 1\n", "k.toml"); }).field(),
            "fov_mm");
  EXPECT_EQ(expect_input_error([] { parse_phantom_table("[[ellipse]]\nintensity = 1\na = 1\n", "k.toml"); }).field(), "ellipse[0].b");
  EXPECT_EQ(expect_input_error([] { parse_phantom_table("[[ellipse\n", "syntax.toml"); }).file(), "syntax.toml");
  EXPECT_EQ(expect_input_error([] { load_phantom_table("/nonexistent/none.toml"); }).file(), "/nonexistent/none.toml");
}

TEST(PhantomTable, ComponentTableRoundTripsExactly) {
  Phantom p = parse_phantom_table(kGood, "two.toml");
  p.phase_gx = 0.25;
  p.description = "round trip";
  const Table t = phantom_to_table(p);
  ASSERT_EQ(t.rows.shape, (Shape{2, 9}));
  EXPECT_EQ(t.columns.front(), "object");
  const Phantom q = phantom_from_table(t, "f.h5");
  EXPECT_EQ(q.name, p.name);
  EXPECT_EQ(q.description, p.description);
  EXPECT_EQ(q.fov_mm, p.fov_mm);
  EXPECT_EQ(q.phase0_rad, p.phase0_rad);
  EXPECT_EQ(q.phase_gx, p.phase_gx);
  ASSERT_EQ(q.components.size(), p.components.size());
  for (size_t i = 0; i < p.components.size(); ++i) {
    EXPECT_EQ(q.components[i].kind, p.components[i].kind);
    EXPECT_EQ(q.components[i].intensity, p.components[i].intensity);
    EXPECT_EQ(q.components[i].a, p.components[i].a);
    EXPECT_EQ(q.components[i].phi_deg, p.components[i].phi_deg);
  }
}

TEST(PhantomTable, StackTableKeepsObjectsApart) {
  Phantom a = parse_phantom_table(kGood, "two.toml");
  a.phase0_rad = 0.0;
  Phantom b = testing::load_repo_phantom("shepp-logan");
  b.fov_mm = a.fov_mm;
  const Table t = phantoms_to_table({a, b});
  EXPECT_EQ(t.rows.shape, (Shape{12, 9}));
  EXPECT_EQ(t.number_attrs.at("objects"), 2.0);
  const std::vector<Phantom> back = phantoms_from_table(t, "stack.h5");
  ASSERT_EQ(back.size(), 2u);
  EXPECT_EQ(back[0].components.size(), 2u);
  EXPECT_EQ(back[1].components.size(), 10u);
  EXPECT_EQ(phantom_from_table(t, "stack.h5", 1).components[0].intensity, cdouble(2.0, 0.0));
  const InputError e = expect_input_error([&] { phantom_from_table(t, "stack.h5", 2); });
  EXPECT_EQ(e.field(), kPhantomTablePath);
}

TEST(PhantomTable, RejectsMalformedComponentTable) {
  Table t = phantom_to_table(testing::load_repo_phantom("shepp-logan"));
  Table missing = t;
  missing.columns[4] = "semi_a";
  EXPECT_NE(std::string(expect_input_error([&] { phantom_from_table(missing, "m.h5"); }).what()).find("missing column 'a'"),
            std::string::npos);
  Table negative = t;
  negative.rows.data[3 * 9 + 5] = -1.0;  // row 3, column b
  const InputError e = expect_input_error([&] { phantom_from_table(negative, "n.h5"); });
  EXPECT_EQ(e.file(), "n.h5");
  EXPECT_NE(std::string(e.what()).find("row 3"), std::string::npos) << e.what();
  Table badtype = t;
  badtype.rows.data[1] = 7.0;
  expect_input_error([&] { phantom_from_table(badtype, "t.h5"); });
  Table gap = t;
  gap.rows.data[0] = 2.0;  // object 2 exists, so objects 0 and 1 must too
  for (size_t r = 1; r < 10; ++r) gap.rows.data[r * 9] = 2.0;
  expect_input_error([&] { phantoms_from_table(gap, "g.h5"); });
}

}  // namespace
}  // namespace recofold
