// SPDX-License-Identifier: Apache-2.0
// Readers on corrupt files found by fuzzing (tests/fuzz): malformed PNG and
// MetaImage files, HDF5 files with a corrupt global heap or attribute
// message. Every one is an InputError naming the file (and the header key),
// never a library abort, hang or heap overwrite. Each corrupt file is read in
// a child process with a time limit, so a crash or hang shows as a failed
// expectation instead of ending the test binary.
// PNG files are built here chunk by chunk (PNG specification, ISO/IEC 15948:
// signature, IHDR, optional PLTE/tRNS/sCAL, IDAT holding the zlib stream of
// filter-type-0 rows, IEND; CRC-32 over chunk type and data; from memory).
#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>
#include <zlib.h>

#include <cstdlib>
#include <fstream>
#include <functional>
#include <sstream>
#include <string>
#include <vector>

#include "recofold/core/checks.h"
#include "recofold/core/error.h"
#include "recofold/io/image_export.h"
#include "recofold/io/image_file.h"
#include "test_dirs.h"

namespace recofold {
namespace {

std::string fresh_dir() { return recofold::testing::fresh_test_dir("recofold_io_corrupt"); }

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

// Outcome of `read` in a child process: "InputError|<field>|<message>",
// "other exception", "read" (accepted), "signal N" (crash, abort, or the
// 60 s alarm of a hang).
std::string outcome_in_child(const std::function<void()>& read) {
  int fds[2];
  if (::pipe(fds) != 0) return "pipe failed";
  std::fflush(nullptr);
  const pid_t pid = ::fork();
  if (pid == 0) {
    ::close(fds[0]);
    ::alarm(60);
    std::string out;
    try {
      read();
      out = "read";
    } catch (const InputError& e) {
      out = "InputError|" + e.field() + "|" + e.what();
    } catch (...) {
      out = "other exception";
    }
    if (::write(fds[1], out.data(), out.size()) < 0) std::_Exit(5);
    std::_Exit(0);
  }
  ::close(fds[1]);
  std::string got;
  char buf[512];
  ssize_t n;
  while ((n = ::read(fds[0], buf, sizeof buf)) > 0) got.append(buf, static_cast<size_t>(n));
  ::close(fds[0]);
  int status = 0;
  ::waitpid(pid, &status, 0);
  if (WIFSIGNALED(status)) return "signal " + std::to_string(WTERMSIG(status));
  return got;
}

std::string import_in_child(const std::string& path) {
  return outcome_in_child([&] { import_image(path); });
}

// Expects an InputError on `path` (field `field` when given) in one line
// without memory addresses.
void expect_refused(const std::string& path, const std::string& field = "", const std::string& words = "",
                    const std::function<void()>& read = {}) {
  const std::string got = read ? outcome_in_child(read) : import_in_child(path);
  ASSERT_EQ(got.rfind("InputError|", 0), 0u) << path << ": " << got;
  const auto bar = got.find('|', 11);
  if (!field.empty()) {
    EXPECT_EQ(got.substr(11, bar - 11), field) << got;
  }
  const std::string msg = got.substr(bar + 1);
  EXPECT_NE(msg.find(path), std::string::npos) << msg;
  EXPECT_EQ(msg.find('\n'), std::string::npos) << msg;
  EXPECT_EQ(msg.find("0x"), std::string::npos) << msg;
  if (!words.empty()) {
    EXPECT_NE(msg.find(words), std::string::npos) << msg;
  }
}

// ------------------------------------------------------------------ PNG

void put_u32(std::string& out, uint32_t v) {
  for (int shift = 24; shift >= 0; shift -= 8) out.push_back(static_cast<char>((v >> shift) & 0xFF));
}

std::string chunk(const std::string& type, const std::string& data) {
  std::string out;
  put_u32(out, static_cast<uint32_t>(data.size()));
  const std::string body = type + data;
  out += body;
  put_u32(out, static_cast<uint32_t>(crc32(0L, reinterpret_cast<const Bytef*>(body.data()), static_cast<uInt>(body.size()))));
  return out;
}

// A PNG of `ny` rows of `row_bytes` bytes each (already packed) with the
// given bit depth and colour type; `extra` chunks go before IDAT.
std::string make_png(uint32_t nx, uint32_t ny, int depth, int colour, const std::vector<std::string>& rows,
                     const std::string& extra = "") {
  std::string raw;
  for (const auto& r : rows) raw += std::string(1, '\0') + r;
  uLongf zlen = compressBound(static_cast<uLong>(raw.size()));
  std::string z(zlen, '\0');
  compress2(reinterpret_cast<Bytef*>(z.data()), &zlen, reinterpret_cast<const Bytef*>(raw.data()),
            static_cast<uLong>(raw.size()), 6);
  z.resize(zlen);
  std::string ihdr;
  put_u32(ihdr, nx);
  put_u32(ihdr, ny);
  ihdr += static_cast<char>(depth);
  ihdr += static_cast<char>(colour);
  ihdr += std::string(3, '\0');
  return std::string("\x89PNG\r\n\x1a\n", 8) + chunk("IHDR", ihdr) + extra + chunk("IDAT", z) + chunk("IEND", "");
}

std::string bytes(std::initializer_list<int> v) {
  std::string s;
  for (int b : v) s.push_back(static_cast<char>(b));
  return s;
}

std::vector<float> values_of(const ImageRecord& rec) {
  std::vector<float> v;
  for (const auto& z : rec.pixels.data) v.push_back(z.real());
  return v;
}

TEST(PngImport, ReadsTheColourTypesAndDepthsAsBefore) {
  const std::string dir = fresh_dir();
  // Grey, 1 bit: 1 0 1 0 expanded to 0..255.
  write_bytes(dir + "/g1.png", make_png(4, 1, 1, 0, {bytes({0xA0})}));
  EXPECT_EQ(values_of(import_image(dir + "/g1.png")), (std::vector<float>{255, 0, 255, 0}));
  // Grey, 16 bits (big-endian samples), 2 x 2, row 0 first.
  write_bytes(dir + "/g16.png", make_png(2, 2, 16, 0, {bytes({0x01, 0x02, 0xFF, 0xFF}), bytes({0, 0, 0, 7})}));
  const ImageRecord g16 = import_image(dir + "/g16.png");
  EXPECT_EQ(g16.pixels.shape, (Shape{2, 2}));
  EXPECT_EQ(values_of(g16), (std::vector<float>{258, 65535, 0, 7}));
  // RGB, 8 bits: luminance 0.2125 R + 0.7154 G + 0.0721 B.
  write_bytes(dir + "/rgb.png", make_png(2, 1, 8, 2, {bytes({10, 20, 30, 255, 255, 255})}));
  const auto rgb = values_of(import_image(dir + "/rgb.png"));
  EXPECT_FLOAT_EQ(rgb[0], static_cast<float>((2125.0 * 10 + 7154.0 * 20 + 721.0 * 30) / 10000.0));
  EXPECT_FLOAT_EQ(rgb[1], 255.f);
  // Palette with a tRNS entry: index 1 is half transparent -> luminance x 128/255.
  const std::string pal = chunk("PLTE", bytes({0, 0, 0, 200, 100, 50})) + chunk("tRNS", bytes({255, 128}));
  write_bytes(dir + "/pal.png", make_png(2, 1, 8, 3, {bytes({1, 0})}, pal));
  const auto p = values_of(import_image(dir + "/pal.png"));
  EXPECT_FLOAT_EQ(p[0], static_cast<float>((2125.0 * 200 + 7154.0 * 100 + 721.0 * 50) / 10000.0 * 128.0 / 255.0));
  EXPECT_FLOAT_EQ(p[1], 0.f);
  // sCAL (unit 1 = metre here, the value is taken as it is, like ITK did): spacing.
  const std::string scal = chunk("sCAL", std::string("\x01") + "0.5" + '\0' + "2");
  write_bytes(dir + "/scal.png", make_png(2, 1, 8, 0, {bytes({1, 2})}, scal));
  const ImageRecord s = import_image(dir + "/scal.png");
  EXPECT_DOUBLE_EQ(s.pixel_spacing_mm[1], 0.5);  // x
  EXPECT_DOUBLE_EQ(s.pixel_spacing_mm[0], 2.0);  // y
  // Grey + alpha is refused as before (two components).
  write_bytes(dir + "/ga.png", make_png(1, 1, 8, 4, {bytes({9, 255})}));
  expect_refused(dir + "/ga.png", "", "grey + alpha");
}

TEST(PngImport, CorruptChunksAreInputErrorsNotAborts) {
  const std::string dir = fresh_dir();
  const std::string good = make_png(8, 8, 8, 0, std::vector<std::string>(8, std::string(8, 'x')),
                                    chunk("tEXt", std::string("Comment") + '\0' + "hello"));
  write_bytes(dir + "/good.png", good);
  EXPECT_EQ(import_in_child(dir + "/good.png"), "read");
  const size_t text_at = 8 + 25;  // after the signature and IHDR
  // A chunk type that is not four letters (the first fuzz finding: libpng's
  // png_error without a jump buffer aborted the process under ITK).
  std::string bad_type = good;
  bad_type.replace(text_at + 4, 4, bytes({0xA0, 'Y', 0, 0}));
  write_bytes(dir + "/type.png", bad_type);
  expect_refused(dir + "/type.png", "", "cannot read PNG");
  // A chunk length beyond the file (the second finding).
  std::string long_chunk = good;
  long_chunk.replace(text_at, 4, bytes({0x20, 0x1E, 0x00, 0x00}));
  write_bytes(dir + "/length.png", long_chunk);
  expect_refused(dir + "/length.png");
  // A broken CRC of IHDR, scrambled image data, a cut file.
  std::string crc = good;
  crc[8 + 8 + 13] ^= 0x55;
  write_bytes(dir + "/crc.png", crc);
  expect_refused(dir + "/crc.png");
  std::string scrambled = good;
  const size_t idat = good.find("IDAT");
  for (size_t i = idat + 6; i < idat + 20; ++i) scrambled[i] ^= 0x5A;
  write_bytes(dir + "/data.png", scrambled);
  expect_refused(dir + "/data.png");
  write_bytes(dir + "/cut.png", good.substr(0, idat + 12));
  expect_refused(dir + "/cut.png", "", "truncated or corrupt");
}

TEST(PngImport, HeaderSizesAreCheckedBeforeAllocating) {
  const std::string dir = fresh_dir();
  // Width beyond the axis limit: refused by libpng's user limit.
  std::string wide = make_png(1, 1, 8, 0, {bytes({0})});
  std::string ihdr;
  put_u32(ihdr, static_cast<uint32_t>(kMaxAxisLength + 1));
  put_u32(ihdr, 1);
  ihdr += bytes({8, 0, 0, 0, 0});
  wide.replace(8, 25, chunk("IHDR", ihdr));
  write_bytes(dir + "/wide.png", wide);
  expect_refused(dir + "/wide.png");
  // 20000 x 20000 declared, within the axis limit: the memory budget refuses
  // it before the rows are allocated (the file holds a few bytes only).
  std::string big = make_png(1, 1, 8, 0, {bytes({0})});
  ihdr.clear();
  put_u32(ihdr, 20000);
  put_u32(ihdr, 20000);
  ihdr += bytes({16, 0, 0, 0, 0});
  big.replace(8, 25, chunk("IHDR", ihdr));
  write_bytes(dir + "/big.png", big);
  ::setenv("RECOFOLD_MEMORY_LIMIT_MB", "64", 1);
  expect_refused(dir + "/big.png", "image header", "memory budget");
  ::unsetenv("RECOFOLD_MEMORY_LIMIT_MB");
}

// ------------------------------------------------------------ MetaImage

// The header of a .mha file written by recofold, as lines, and its pixel bytes.
struct Mha {
  std::vector<std::string> lines;
  std::string data;
};

Mha split_mha(const std::string& file) {
  Mha m;
  size_t pos = 0;
  while (pos < file.size()) {
    const size_t nl = file.find('\n', pos);
    m.lines.push_back(file.substr(pos, nl - pos));
    pos = nl + 1;
    if (m.lines.back().rfind("ElementDataFile", 0) == 0) break;
  }
  m.data = file.substr(pos);
  return m;
}

std::string join_mha(const Mha& m) {
  std::string s;
  for (const auto& l : m.lines) s += l + "\n";
  return s + m.data;
}

// Replaces the line starting with `key` (or appends before ElementDataFile).
Mha with_line(Mha m, const std::string& key, const std::string& line) {
  for (auto& l : m.lines)
    if (l.rfind(key + " ", 0) == 0) {
      l = line;
      return m;
    }
  m.lines.insert(m.lines.end() - 1, line);
  return m;
}

TEST(MetaImageImport, MalformedHeadersAreRefusedNamingTheKey) {
  const std::string dir = fresh_dir();
  ImageRecord rec;
  rec.pixels = NdArray<cfloat>(Shape{6, 8});
  for (size_t i = 0; i < rec.pixels.data.size(); ++i) rec.pixels.data[i] = cfloat(0.25f * float(i), 0.f);
  write_image_any(dir + "/good.mha", rec, Provenance{}, PngWindow{});
  const Mha good = split_mha(read_bytes(dir + "/good.mha"));
  ASSERT_GE(good.lines.size(), 5u);
  EXPECT_EQ(import_in_child(dir + "/good.mha"), "read");
  struct Case {
    std::string name, key, line, field;
  };
  const std::vector<Case> cases = {
      {"ndims", "NDims", "NDims = 12", "NDims"},
      {"dimsize", "DimSize", "DimSize = 8 6 1", "DimSize"},
      {"dimzero", "DimSize", "DimSize = 8 0", "DimSize"},
      {"matrix", "TransformMatrix", "TransformMatrix = 1 0 0", "TransformMatrix"},
      {"spacing", "ElementSpacing", "ElementSpacing = nan 1", "ElementSpacing"},
      {"type", "ElementType", "ElementType = MET_STRING", "ElementType"},
      {"bool", "BinaryData", "BinaryData =_use_only = 0", "BinaryData"},
      {"twice", "Offset", "Offset = 0 0\nOffset = 0 0", "Offset"},
      {"channels", "ElementNumberOfChannels", "ElementNumberOfChannels = 100000", "ElementNumberOfChannels"},
      {"long", "Comment", "Comment = " + std::string(3000, 'c'), "MetaImage header"},
      {"nokey", "Comment", "just some words", "MetaImage header"},
  };
  for (const auto& c : cases) {
    const std::string path = dir + "/" + c.name + ".mha";
    write_bytes(path, join_mha(with_line(good, c.key, c.line)));
    SCOPED_TRACE(c.name);
    expect_refused(path, c.field);
  }
  // NDims after an array field, and no ElementDataFile line at all.
  Mha late = good;
  std::swap(late.lines[1], late.lines[5]);
  write_bytes(dir + "/late.mha", join_mha(late));
  expect_refused(dir + "/late.mha", "", "before NDims");
  Mha nofile = good;
  nofile.lines.pop_back();
  write_bytes(dir + "/nofile.mha", join_mha(nofile));
  expect_refused(dir + "/nofile.mha");
}

TEST(MetaImageImport, FilesWrittenByRecofoldStillRead) {
  const std::string dir = fresh_dir();
  ImageRecord stack;
  stack.pixels = NdArray<cfloat>(Shape{3, 4, 5});
  for (size_t i = 0; i < stack.pixels.data.size(); ++i) stack.pixels.data[i] = cfloat(float(i), 0.f);
  write_image_any(dir + "/s.mha", stack, Provenance{}, PngWindow{});
  const ImageRecord back = import_image(dir + "/s.mha");
  EXPECT_EQ(back.pixels.shape, stack.pixels.shape);
  EXPECT_EQ(values_of(back), values_of(stack));
  // A free-text key of another writer is accepted.
  const Mha m = with_line(split_mha(read_bytes(dir + "/s.mha")), "Modality", "Modality = MET_MOD_CT");
  write_bytes(dir + "/m.mha", join_mha(m));
  EXPECT_EQ(import_in_child(dir + "/m.mha"), "read");
}

// ------------------------------------------------------------------ HDF5

// An image file with a table (components) that carries a number attribute
// written after its `columns` attribute.
std::string image_with_table(const std::string& dir) {
  ImageRecord rec;
  rec.pixels = NdArray<cfloat>(Shape{4, 4});
  for (size_t i = 0; i < rec.pixels.data.size(); ++i) rec.pixels.data[i] = cfloat(float(i), 0.f);
  Table t;
  t.columns = {"a", "b"};
  t.rows = NdArray<double>(Shape{1, 2});
  t.number_attrs["zmarker"] = 1.5;
  rec.tables["/phantom/components"] = t;
  const std::string path = dir + "/good.h5";
  write_image_file(path, rec, Provenance{});
  return path;
}

TEST(Hdf5Corrupt, AFreeSpaceObjectOfSizeZeroInTheGlobalHeapIsRefusedNotAHang) {
  const std::string dir = fresh_dir();
  std::string bytes = read_bytes(image_with_table(dir));
  // Walk the first global heap collection (layout in h5_file.cc) to its
  // free-space object (index 0) and give it size 0: HDF5 1.10.8 loops for
  // ever loading such a collection (the hangs found by fuzzing).
  const size_t c = bytes.find("GCOL");
  ASSERT_NE(c, std::string::npos);
  auto le = [&](size_t at, int n) {
    uint64_t v = 0;
    for (int i = n - 1; i >= 0; --i) v = (v << 8) | static_cast<unsigned char>(bytes[at + size_t(i)]);
    return v;
  };
  const uint64_t size = le(c + 8, 8);
  size_t p = 16;
  while (p + 16 <= size && le(c + p, 2) != 0) p += 16 + (le(c + p + 8, 8) + 7) / 8 * 8;
  ASSERT_LT(p + 16, size) << "no free space in the collection";
  for (int i = 0; i < 8; ++i) bytes[c + p + 8 + size_t(i)] = '\0';
  write_bytes(dir + "/heap.h5", bytes);
  expect_refused(dir + "/heap.h5", "", "global heap", [&] { read_image_file(dir + "/heap.h5"); });
}

TEST(Hdf5Corrupt, AnUndecodableAttributeMessageIsRefusedNotACrash) {
  const std::string dir = fresh_dir();
  std::string bytes = read_bytes(image_with_table(dir));
  // The attribute message of "zmarker" (object header version 1: name padded
  // to 8 bytes, then the datatype message, whose first byte holds the
  // version in its high 4 bits): version 0 does not exist. H5Aiterate2 on
  // such an object fails (here) or crashes, depending on what its table
  // held (the fuzz finding, replayed from tests/fuzz/regressions/h5_image);
  // before, the failure was ignored and the attributes silently dropped.
  const size_t name = bytes.find(std::string("zmarker") + '\0');
  ASSERT_NE(name, std::string::npos);
  bytes[name + 8] = static_cast<char>(static_cast<unsigned char>(bytes[name + 8]) & 0x0F);
  write_bytes(dir + "/attr.h5", bytes);
  expect_refused(dir + "/attr.h5", "/phantom/components", "cannot be decoded",
                 [&] { read_image_file(dir + "/attr.h5"); });
  // The intact file reads, table and attribute included.
  const ImageRecord rec = read_image_file(dir + "/good.h5");
  ASSERT_EQ(rec.tables.count("/phantom/components"), 1u);
  EXPECT_EQ(rec.tables.at("/phantom/components").number_attrs.at("zmarker"), 1.5);
}

TEST(Hdf5Corrupt, AnEndOfFileAddressThatIsNotTheFileSizeIsRefusedBeforeOpening) {
  const std::string dir = fresh_dir();
  const std::string bytes = read_bytes(image_with_table(dir));
  // Superblock version 0 (recofold's files): end-of-file address at byte 40.
  // HDF5 1.10.8 opened such a file and leaked what it had loaded when an
  // object lay beyond that address (a fuzz finding, LeakSanitizer).
  ASSERT_EQ(bytes[8], '\0');
  std::string small = bytes;
  small.replace(40, 8, std::string("\xf0\0\0\0\0\0\0\0", 8));
  write_bytes(dir + "/eof.h5", small);
  expect_refused(dir + "/eof.h5", "", "superblock declares 240 bytes", [&] { read_image_file(dir + "/eof.h5"); });
  write_bytes(dir + "/cut.h5", bytes.substr(0, bytes.size() - 100));
  expect_refused(dir + "/cut.h5", "", "truncated or corrupt", [&] { read_image_file(dir + "/cut.h5"); });
}

}  // namespace
}  // namespace recofold
