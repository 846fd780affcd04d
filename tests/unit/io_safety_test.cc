// SPDX-License-Identifier: Apache-2.0
// io under failure: writes that run out of space (RLIMIT_FSIZE makes every
// write past a size fail, as a full disk does, without needing root), files
// whose data is shorter than their header says, shapes beyond the size limits,
// folders where files are expected.
#include <dirent.h>
#include <gtest/gtest.h>
#include <signal.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <functional>
#include <sstream>
#include <string>
#include <vector>

#include "recofold/core/atomic_file.h"
#include "recofold/core/checks.h"
#include "recofold/core/config.h"
#include "recofold/core/error.h"
#include "recofold/io/h5_file.h"
#include "recofold/io/image_export.h"
#include "recofold/io/image_file.h"
#include "test_dirs.h"

namespace recofold {
namespace {

std::string fresh_dir() { return recofold::testing::fresh_test_dir("recofold_io_safety"); }

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

ImageRecord ramp(Index ny, Index nx) {
  ImageRecord rec;
  rec.pixels = NdArray<cfloat>(Shape{ny, nx});
  for (Index i = 0; i < ny * nx; ++i) rec.pixels.data[static_cast<size_t>(i)] = cfloat(0.001f * i + 0.5f, 0.f);
  return rec;
}

// Runs `body` in a child process whose files may not grow beyond `limit`
// bytes. The child exits 0 if `body` threw WorkError, 3 if it threw something
// else, 4 if it returned normally; a crash (also one during the libraries'
// clean-up at exit) shows as a signal.
int run_with_file_limit(rlim_t limit, const std::function<void()>& body) {
  std::fflush(nullptr);
  const pid_t pid = ::fork();
  if (pid == 0) {
    ::signal(SIGXFSZ, SIG_IGN);  // then write() fails with EFBIG, like a full disk
    struct rlimit rl{limit, limit};
    ::setrlimit(RLIMIT_FSIZE, &rl);
    int code = 4;
    try {
      body();
    } catch (const WorkError&) {
      code = 0;
    } catch (...) {
      code = 3;
    }
    std::exit(code);  // runs the atexit clean-up of HDF5 and ITK
  }
  int status = 0;
  ::waitpid(pid, &status, 0);
  if (WIFSIGNALED(status)) return 128 + WTERMSIG(status);
  return WEXITSTATUS(status);
}

void write_bytes(const std::string& path, const std::string& bytes) {
  std::ofstream out(path, std::ios::binary);
  out << bytes;
}

std::string read_bytes(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

void expect_input_error(const std::function<void()>& fn, const std::string& words) {
  try {
    fn();
    FAIL() << "expected InputError mentioning '" << words << "'";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find(words), std::string::npos) << e.what();
  }
}

TEST(FullDisk, Hdf5WriteFailsCleanlyLeavesNothingAndDoesNotCrashAtExit) {
  const std::string dir = fresh_dir();
  const int rc = run_with_file_limit(20000, [&] {
    Provenance prov;
    write_image_file(dir + "/big.h5", ramp(128, 128), prov);  // about 66 kB
  });
  EXPECT_EQ(rc, 0) << "expected WorkError and a clean exit (exit 0), got " << rc;
  EXPECT_TRUE(list_dir(dir).empty());
}

TEST(FullDisk, EveryImageFormatFailsCleanlyAndLeavesNothing) {
  for (const char* ext : {".nii", ".nii.gz", ".mha", ".nrrd", ".png"}) {
    const std::string dir = fresh_dir();
    const std::string path = dir + "/img" + ext;
    // Noise does not compress: the gzip/PNG files exceed the limit too.
    ImageRecord rec = ramp(128, 128);
    uint32_t state = 12345;
    for (auto& z : rec.pixels.data) {
      state = state * 1664525u + 1013904223u;
      z = cfloat(static_cast<float>(state >> 8) / 16777216.f, 0.f);
    }
    const int rc = run_with_file_limit(3000, [&] {
      PngWindow w;
      w.bits = 16;
      write_image_any(path, rec, Provenance{}, w);
    });
    EXPECT_EQ(rc, 0) << ext << ": expected WorkError and a clean exit, got " << rc;
    EXPECT_TRUE(list_dir(dir).empty()) << ext << ": left " << (list_dir(dir).empty() ? "" : list_dir(dir)[0]);
  }
}

TEST(FullDisk, TextWriteFailsWithWorkError) {
  const std::string dir = fresh_dir();
  const int rc = run_with_file_limit(100, [&] { write_text_atomic(dir + "/a.txt", std::string(5000, 'x')); });
  EXPECT_EQ(rc, 0);
  EXPECT_TRUE(list_dir(dir).empty());
}

TEST(ImageImport, RefusesFilesShorterThanTheirHeader) {
  const std::string dir = fresh_dir();
  const ImageRecord rec = ramp(32, 40);
  for (const char* ext : {".nii", ".mha", ".nrrd", ".png"}) {
    const std::string good = dir + "/good" + ext, cut = dir + "/cut" + ext;
    write_image_any(good, rec, Provenance{}, PngWindow{});
    const std::string bytes = read_bytes(good);
    write_bytes(cut, bytes.substr(0, bytes.size() * 2 / 3));
    try {
      import_image(cut);
      ADD_FAILURE() << ext << ": a truncated file was read";
    } catch (const InputError& e) {
      EXPECT_EQ(e.file(), cut);
      EXPECT_EQ(std::string(e.what()).find("0x"), std::string::npos) << "library dump: " << e.what();
      EXPECT_EQ(std::string(e.what()).find('\n'), std::string::npos) << "more than one line: " << e.what();
    }
  }
}

TEST(ImageImport, RefusesAHugeNiftiHeaderWithLittleDataBeforeAllocating) {
  const std::string dir = fresh_dir();
  write_image_any(dir + "/g.nii", ramp(8, 8), Provenance{}, PngWindow{});
  std::string h = read_bytes(dir + "/g.nii").substr(0, 352);
  const int16_t dims[8] = {2, 30000, 30000, 1, 1, 1, 1, 1};
  h.replace(40, 16, reinterpret_cast<const char*>(dims), 16);
  write_bytes(dir + "/huge.nii", h + std::string(64, '\0'));
  expect_input_error([&] { import_image(dir + "/huge.nii"); }, "truncated");
}

TEST(ImageImport, RefusesAShapeBeyondTheMemoryBudget) {
  const std::string dir = fresh_dir();
  write_image_any(dir + "/g.nii", ramp(64, 64), Provenance{}, PngWindow{});
  ::setenv("RECOFOLD_MEMORY_LIMIT_MB", "0.01", 1);
  expect_input_error([&] { import_image(dir + "/g.nii"); }, "memory budget");
  expect_input_error([&] { read_image_file(dir + "/missing.h5"); }, "not found");
  write_image_file(dir + "/g.h5", ramp(64, 64), Provenance{});
  expect_input_error([&] { read_image_file(dir + "/g.h5"); }, "memory budget");
  ::unsetenv("RECOFOLD_MEMORY_LIMIT_MB");
  EXPECT_EQ(read_image_file(dir + "/g.h5").pixels.size(), 64 * 64);
}

TEST(ImageImport, RefusesTruncatedGzipStream) {
  const std::string dir = fresh_dir();
  write_image_any(dir + "/g.nii.gz", ramp(64, 64), Provenance{}, PngWindow{});
  const std::string bytes = read_bytes(dir + "/g.nii.gz");
  write_bytes(dir + "/cut.nii.gz", bytes.substr(0, bytes.size() - 40));
  expect_input_error([&] { import_image(dir + "/cut.nii.gz"); }, "truncated");
}

TEST(Files, DirectoriesAreReportedAsDirectories) {
  const std::string dir = fresh_dir();
  expect_input_error([&] { read_text_file(dir); }, "is a directory");
  expect_input_error([&] { Config::load(dir); }, "is a directory");
  expect_input_error([&] { H5Reader r(dir); }, "is a directory");
  ::mkdir((dir + "/folder.nii").c_str(), 0755);
  expect_input_error([&] { import_image(dir + "/folder.nii"); }, "is a directory");
}

TEST(SizeLimits, ElementCountsOverflowAndAxesAreChecked) {
  expect_input_error([] { checked_element_count(Shape{Index{1} << 40, Index{1} << 40}, "f", "d"); }, "axis longer");
  expect_input_error([] { checked_element_count(Shape{1 << 20, 1 << 20}, "f", "d"); }, "more than the limit");
  expect_input_error([] { checked_element_count(Shape{-1, 4}, "f", "d"); }, "negative");
  EXPECT_EQ(checked_element_count(Shape{3, 4, 5}, "f", "d"), 60);
  EXPECT_EQ(readable_bytes(3.6e9), "3.6 GB");
  EXPECT_EQ(readable_bytes(12), "12 B");
}

}  // namespace
}  // namespace recofold
