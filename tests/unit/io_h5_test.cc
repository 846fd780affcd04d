// SPDX-License-Identifier: Apache-2.0
// H5Writer / H5Reader: round trips, root attributes, atomic writes, readable errors.
#include <dirent.h>
#include <gtest/gtest.h>
#include <unistd.h>

#include <cmath>
#include <cstdlib>
#include <fstream>
#include <string>
#include <thread>
#include <vector>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/io/h5_file.h"
#include "test_dirs.h"

namespace recofold {
namespace {

std::string fresh_dir() { return recofold::testing::fresh_test_dir("recofold_io_h5"); }

std::vector<std::string> list_dir(const std::string& dir) {
  std::vector<std::string> names;
  DIR* d = ::opendir(dir.c_str());
  if (!d) return names;
  while (dirent* e = ::readdir(d)) {
    const std::string n = e->d_name;
    if (n != "." && n != "..") names.push_back(n);
  }
  ::closedir(d);
  return names;
}

TEST(H5Writer, RoundTripsEveryDatasetTypeAndAttribute) {
  const std::string dir = fresh_dir();
  const std::string path = dir + "/all.h5";
  NdArray<float> f(Shape{2, 3});
  NdArray<double> d(Shape{4});
  NdArray<cfloat> c(Shape{2, 2, 2});
  NdArray<uint8_t> u(Shape{3, 2});
  NdArray<int64_t> i(Shape{5});
  for (Index k = 0; k < f.size(); ++k) f.data[k] = 0.5f * k - 1;
  for (Index k = 0; k < d.size(); ++k) d.data[k] = 1e-3 * k;
  for (Index k = 0; k < c.size(); ++k) c.data[k] = cfloat(k, -2.f * k);
  for (Index k = 0; k < u.size(); ++k) u.data[k] = static_cast<uint8_t>(k % 2);
  for (Index k = 0; k < i.size(); ++k) i.data[k] = (int64_t{1} << 40) + k;
  {
    H5Writer w(path);
    w.write("/a/f", f);
    w.write("/a/d", d);
    w.write("/b/c/complex", c);
    w.write("/u", u);
    w.write("/i", i);
    w.write_attr("/a", "scale", 2.5);
    w.write_attr("/a/f", "count", int64_t{7});
    w.write_attr("/grp", "name", std::string("hello"));
    w.write_attr("/", "spacing", std::vector<double>{0.5, 0.25});
    w.write_attr("/", "shape", std::vector<int64_t>{8, 9});
    w.commit();
  }
  H5Reader r(path);
  EXPECT_EQ(r.attr_int("/", "research_use_only"), 1);
  EXPECT_NE(r.attr_string("/", "producer").find("recofold"), std::string::npos);
  EXPECT_TRUE(r.has("/a/f"));
  EXPECT_TRUE(r.is_group("/b/c"));
  EXPECT_FALSE(r.is_group("/a/f"));
  EXPECT_FALSE(r.has("/a/missing"));
  EXPECT_FALSE(r.has("/nothing/deeper"));
  EXPECT_EQ(r.children("/"), (std::vector<std::string>{"a", "b", "grp", "i", "u"}));
  EXPECT_EQ(r.shape("/b/c/complex"), (Shape{2, 2, 2}));
  EXPECT_TRUE(r.is_complex("/b/c/complex"));
  EXPECT_FALSE(r.is_complex("/a/f"));
  EXPECT_EQ(r.type_name("/b/c/complex"), "complex64");
  EXPECT_EQ(r.type_name("/a/f"), "float32");
  EXPECT_EQ(r.type_name("/u"), "uint8");
  EXPECT_EQ(r.type_name("/i"), "int64");
  EXPECT_EQ(r.read_float("/a/f").data, f.data);
  EXPECT_EQ(r.read_double("/a/d").data, d.data);
  EXPECT_EQ(r.read_complex("/b/c/complex").data, c.data);
  EXPECT_EQ(r.read_u8("/u").data, u.data);
  EXPECT_EQ(r.read_int("/i").data, i.data);
  // Real data read as complex gets a zero imaginary part.
  const auto fc = r.read_complex("/a/f");
  EXPECT_EQ(fc.data[3], cfloat(f.data[3], 0.f));
  EXPECT_DOUBLE_EQ(r.attr_double("/a", "scale"), 2.5);
  EXPECT_EQ(r.attr_int("/a/f", "count"), 7);
  EXPECT_EQ(r.attr_string("/grp", "name"), "hello");
  EXPECT_EQ(r.attr_doubles("/", "spacing"), (std::vector<double>{0.5, 0.25}));
  EXPECT_EQ(r.attr_doubles("/", "shape"), (std::vector<double>{8, 9}));
  EXPECT_EQ(r.attr_as_text("/", "spacing"), "[0.5, 0.25]");
  EXPECT_EQ(r.attr_as_text("/grp", "name"), "hello");
  EXPECT_TRUE(r.has_attr("/a", "scale"));
  EXPECT_FALSE(r.has_attr("/a", "nope"));
  EXPECT_EQ(r.attr_names("/"), (std::vector<std::string>{"producer", "research_use_only", "shape", "spacing"}));
}

TEST(H5Writer, LeavesNothingBehindWithoutCommit) {
  const std::string dir = fresh_dir();
  {
    H5Writer w(dir + "/never.h5");
    w.write("/x", NdArray<float>(Shape{4, 4}, 1.f));
  }
  EXPECT_TRUE(list_dir(dir).empty());
}

TEST(H5Writer, LeavesNothingBehindWhenAWriteFails) {
  const std::string dir = fresh_dir();
  try {
    H5Writer w(dir + "/twice.h5");
    w.write("/x", NdArray<float>(Shape{2}, 1.f));
    w.write("/x", NdArray<float>(Shape{2}, 1.f));  // same path twice: WorkError
    w.commit();
    FAIL() << "writing a dataset twice must throw";
  } catch (const WorkError& e) {
    EXPECT_NE(std::string(e.what()).find("/x"), std::string::npos) << e.what();
  }
  EXPECT_TRUE(list_dir(dir).empty());
}

TEST(H5Writer, ReplacesAnExistingFileOnlyAtCommit) {
  const std::string dir = fresh_dir();
  const std::string path = dir + "/out.h5";
  write_text_atomic(path, "old contents");
  {
    H5Writer w(path);
    w.write("/x", NdArray<float>(Shape{2}, 3.f));
    EXPECT_EQ(read_text_file(path), "old contents");
    w.commit();
  }
  H5Reader r(path);
  EXPECT_EQ(r.read_float("/x").data, (std::vector<float>{3.f, 3.f}));
  EXPECT_EQ(list_dir(dir).size(), 1u);
}

TEST(H5Reader, RejectsMissingFileNamingIt) {
  try {
    H5Reader r("/nonexistent/dir/missing.h5");
    FAIL();
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), "/nonexistent/dir/missing.h5");
    EXPECT_NE(e.reason().find("not found"), std::string::npos);
  }
}

TEST(H5Reader, RejectsFileThatIsNotHdf5) {
  const std::string path = fresh_dir() + "/text.h5";
  write_text_atomic(path, "this is not an HDF5 file\n");
  try {
    H5Reader r(path);
    FAIL();
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), path);
    EXPECT_NE(e.reason().find("not an HDF5 file"), std::string::npos);
  }
}

TEST(H5Reader, RejectsMissingDatasetAndWrongTypesNamingThePath) {
  const std::string path = fresh_dir() + "/types.h5";
  {
    H5Writer w(path);
    w.write("/c", NdArray<cfloat>(Shape{2}, cfloat(1, 2)));
    w.write("/f", NdArray<float>(Shape{2}, 1.5f));
    w.commit();
  }
  H5Reader r(path);
  auto expect_field = [](auto&& fn, const std::string& field, const std::string& words) {
    try {
      fn();
      FAIL() << "expected InputError for " << field;
    } catch (const InputError& e) {
      EXPECT_EQ(e.field(), field);
      EXPECT_NE(e.reason().find(words), std::string::npos) << e.what();
    }
  };
  expect_field([&] { r.read_float("/missing"); }, "/missing", "missing");
  expect_field([&] { r.read_float("/c"); }, "/c", "complex64");
  expect_field([&] { r.read_u8("/f"); }, "/f", "integer");
  expect_field([&] { r.shape("/"); }, "/", "not a dataset");
  expect_field([&] { r.attr_double("/f", "absent"); }, "/f", "absent");
  expect_field([&] { r.attr_string("/", "research_use_only"); }, "/", "expected a string");
}

TEST(H5Reader, ReadsAndReportsErrorsFromSeveralThreadsAtOnce) {
  const std::string dir = fresh_dir();
  NdArray<float> a(Shape{32, 32});
  for (Index k = 0; k < a.size(); ++k) a.data[static_cast<size_t>(k)] = static_cast<float>(k);
  for (int f = 0; f < 4; ++f) {
    H5Writer w(dir + "/f" + std::to_string(f) + ".h5");
    w.write("/x", a);
    w.commit();
  }
  std::vector<int> ok(4, 0), errors(4, 0);
  std::vector<std::thread> threads;
  for (int t = 0; t < 4; ++t)
    threads.emplace_back([&, t] {
      for (int rep = 0; rep < 20; ++rep) {
        H5Reader r(dir + "/f" + std::to_string((t + rep) % 4) + ".h5");
        if (r.read_float("/x").data == a.data) ++ok[t];
        try {
          r.read_float("/absent");
        } catch (const InputError&) {
          ++errors[t];
        }
      }
    });
  for (auto& th : threads) th.join();
  EXPECT_EQ(ok, (std::vector<int>{20, 20, 20, 20}));
  EXPECT_EQ(errors, (std::vector<int>{20, 20, 20, 20}));
}

}  // namespace
}  // namespace recofold
