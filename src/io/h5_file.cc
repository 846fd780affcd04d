// SPDX-License-Identifier: Apache-2.0
// H5Writer / H5Reader: the only place that speaks the HDF5 C API.
#include "recofold/io/h5_file.h"

#include <hdf5.h>
#include <sys/stat.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <memory>
#include <sstream>
#include <type_traits>

#include "recofold/core/atomic_file.h"
#include "recofold/core/checks.h"
#include "recofold/core/error.h"
#include "recofold/core/provenance.h"

namespace recofold {

namespace {

// Silences HDF5's own error stack printing (our errors carry the file and
// dataset instead). Debian's HDF5 is built thread-safe, and then the error
// stack settings are per thread, so this runs once per thread, from every
// entry point that may touch HDF5.
void silence_hdf5() {
  thread_local bool done = false;
  if (!done) {
    H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
    done = true;
  }
}

// Owns one HDF5 identifier and closes it with the matching H5*close.
class Hid {
 public:
  using Closer = herr_t (*)(hid_t);
  Hid() = default;
  Hid(hid_t id, Closer c) : id_(id), close_(c) {}
  ~Hid() { reset(); }
  Hid(Hid&& o) noexcept : id_(o.id_), close_(o.close_) { o.id_ = -1; }
  Hid& operator=(Hid&& o) noexcept {
    if (this != &o) {
      reset();
      id_ = o.id_;
      close_ = o.close_;
      o.id_ = -1;
    }
    return *this;
  }
  Hid(const Hid&) = delete;
  Hid& operator=(const Hid&) = delete;
  hid_t get() const { return id_; }
  bool ok() const { return id_ >= 0; }
  void reset() {
    if (id_ >= 0 && close_) close_(id_);
    id_ = -1;
  }
  // Gives up ownership without closing.
  hid_t release() {
    const hid_t id = id_;
    id_ = -1;
    return id;
  }

 private:
  hid_t id_ = -1;
  Closer close_ = nullptr;
};

Hid make_complex_type(hid_t member) {
  Hid t(H5Tcreate(H5T_COMPOUND, 2 * H5Tget_size(member)), H5Tclose);
  H5Tinsert(t.get(), "r", 0, member);
  H5Tinsert(t.get(), "i", H5Tget_size(member), member);
  return t;
}

Hid make_space(const Shape& s) {
  if (s.rank() == 0) return Hid(H5Screate(H5S_SCALAR), H5Sclose);
  std::vector<hsize_t> dims(s.dims.begin(), s.dims.end());
  return Hid(H5Screate_simple(s.rank(), dims.data(), nullptr), H5Sclose);
}

std::string normalise(const std::string& path) {
  if (path.empty()) return "/";
  return path[0] == '/' ? path : "/" + path;
}

// True if every link on the way to `path` exists.
bool link_exists(hid_t file, const std::string& path) {
  silence_hdf5();
  const std::string p = normalise(path);
  if (p == "/") return true;
  size_t pos = 1;
  while (true) {
    const auto next = p.find('/', pos);
    const std::string prefix = p.substr(0, next);
    if (H5Lexists(file, prefix.c_str(), H5P_DEFAULT) <= 0) return false;
    if (next == std::string::npos) return true;
    pos = next + 1;
  }
}

bool is_complex_type(hid_t t) {
  if (H5Tget_class(t) != H5T_COMPOUND || H5Tget_nmembers(t) != 2) return false;
  for (unsigned m = 0; m < 2; ++m) {
    char* name = H5Tget_member_name(t, m);
    const std::string n = name ? name : "";
    H5free_memory(name);
    if (n != (m == 0 ? "r" : "i")) return false;
    if (H5Tget_member_class(t, m) != H5T_FLOAT) return false;
  }
  return true;
}

std::string describe_type(hid_t t) {
  const H5T_class_t c = H5Tget_class(t);
  const size_t size = H5Tget_size(t);
  switch (c) {
    case H5T_FLOAT:
      return "float" + std::to_string(8 * size);
    case H5T_INTEGER:
      return std::string(H5Tget_sign(t) == H5T_SGN_NONE ? "uint" : "int") + std::to_string(8 * size);
    case H5T_STRING:
      return "string";
    case H5T_COMPOUND:
      if (is_complex_type(t)) return "complex" + std::to_string(8 * size);
      return "compound";
    case H5T_ENUM:
      return "enum";
    default:
      return "other";
  }
}

template <typename T>
hid_t native_type() {
  if constexpr (std::is_same_v<T, float>) return H5T_NATIVE_FLOAT;
  if constexpr (std::is_same_v<T, double>) return H5T_NATIVE_DOUBLE;
  if constexpr (std::is_same_v<T, uint8_t>) return H5T_NATIVE_UINT8;
  if constexpr (std::is_same_v<T, int64_t>) return H5T_NATIVE_INT64;
  return -1;
}

template <typename T>
hid_t file_type() {
  if constexpr (std::is_same_v<T, float>) return H5T_IEEE_F32LE;
  if constexpr (std::is_same_v<T, double>) return H5T_IEEE_F64LE;
  if constexpr (std::is_same_v<T, uint8_t>) return H5T_STD_U8LE;
  if constexpr (std::is_same_v<T, int64_t>) return H5T_STD_I64LE;
  return -1;
}

// ------------------------------------------- global heap collections, checked

uint64_t little_endian(const unsigned char* p, int bytes) {
  uint64_t v = 0;
  for (int i = bytes - 1; i >= 0; --i) v = (v << 8) | p[i];
  return v;
}

// The superblock (HDF5 file format specification, "Superblock"): its
// signature at byte 0, 512, 1024, ... (after a user block); false when not
// found. `sb` receives its first 64 bytes, `at` its offset.
bool read_superblock(std::FILE* f, unsigned char (&sb)[64], long& at) {
  static const unsigned char sig[8] = {0x89, 'H', 'D', 'F', '\r', '\n', 0x1a, '\n'};
  for (at = 0; at <= (1L << 24); at = at ? 2 * at : 512) {
    if (std::fseek(f, at, SEEK_SET) != 0 || std::fread(sb, 1, sizeof sb, f) != sizeof sb) return false;
    if (std::memcmp(sb, sig, 8) == 0) return true;
  }
  return false;
}

// Size of lengths: byte 14 of superblock versions 0 and 1, byte 10 of 2 and 3.
int length_size(std::FILE* f) {
  unsigned char sb[64];
  long at = 0;
  if (!read_superblock(f, sb, at)) return 0;
  return sb[8] <= 1 ? sb[14] : sb[10];
}

// The base and end-of-file addresses of the superblock (8-byte offsets;
// versions 0/1: base at byte 24 or 28, the end of file 16 bytes later;
// versions 2/3: base at 12, end of file at 28) against the file size. HDF5
// 1.10.8 opens a file that is longer than that address and, when an object
// lies beyond it, fails inside H5Fopen leaking what it had loaded (a fuzz
// finding); a mismatch means a truncated or corrupt file anyway.
void require_consistent_end_of_file(const std::string& path) {
  std::unique_ptr<std::FILE, int (*)(std::FILE*)> f(std::fopen(path.c_str(), "rb"), std::fclose);
  unsigned char sb[64];
  long at = 0;
  if (!f || !read_superblock(f.get(), sb, at) || sb[8] > 3) return;  // H5Fopen reports it
  const bool old_layout = sb[8] <= 1;
  if ((old_layout ? sb[13] : sb[9]) != 8) return;  // offsets of another size: not checked
  const size_t base_at = sb[8] == 0 ? 24 : sb[8] == 1 ? 28 : 12;
  const uint64_t base = little_endian(sb + base_at, 8), eof = little_endian(sb + base_at + 16, 8);
  std::fseek(f.get(), 0, SEEK_END);
  const uint64_t size = static_cast<uint64_t>(std::ftell(f.get()));
  if (eof > size || base + eof != size)
    throw InputError(path, "", "its superblock declares " + std::to_string(eof) + " bytes from byte " +
                                   std::to_string(base) + ", but the file has " + std::to_string(size) +
                                   " (truncated or corrupt)");
}

// True when walking the objects of the collection at `c` (`n` bytes from it
// to the end of the file) the way HDF5 1.10's loader does ends cleanly. Layout
// (file format specification, "Global Heap"): "GCOL", version 1, 3 reserved
// bytes, the collection size; then objects of index (2 bytes), reference count
// (2), reserved (4), size, data padded to 8 bytes; index 0 is the free space
// and its size covers the rest. HDF5 advances by that size without checking
// it: a free-space object of size 0 makes it loop for ever (a fuzz finding),
// one beyond the collection makes it read past its buffer.
bool collection_walk_ends(const unsigned char* c, uint64_t n) {
  const uint64_t size = little_endian(c + 8, 8);
  if (c[4] != 1 || size < 16 || size > n) return true;  // not one HDF5 would load (it skips the reserved bytes)
  uint64_t p = 16;
  while (p < size) {
    if (p + 16 > size) break;  // a tail too small for an object header: free space
    const unsigned idx = static_cast<unsigned>(little_endian(c + p, 2));
    const uint64_t obj = little_endian(c + p + 8, 8);
    const uint64_t need = idx > 0 ? (obj > size ? size + 1 : 16 + (obj + 7) / 8 * 8) : obj;
    if (need == 0 || need > size - p) return false;
    p += need;
  }
  return true;
}

// Throws InputError when a global heap collection of the file (where variable-
// length strings live) would hang or overrun HDF5's loader; run before the
// first variable-length read. Collections are found by their signature; files
// whose lengths are not 8 bytes (not written by recofold or h5py's defaults)
// are not checked.
void require_sane_global_heaps(const std::string& path) {
  std::unique_ptr<std::FILE, int (*)(std::FILE*)> f(std::fopen(path.c_str(), "rb"), std::fclose);
  if (!f || length_size(f.get()) != 8) return;
  std::fseek(f.get(), 0, SEEK_END);
  const long end = std::ftell(f.get());
  if (end <= 0) return;
  // The whole file is scanned in blocks that overlap by one collection
  // header; a collection is checked from a buffer holding it to the end
  // (HDF5's minimum collection is 4 kB, so most fit in one block).
  constexpr size_t kBlock = size_t{1} << 20;
  std::vector<unsigned char> buf;
  for (long at = 0; at < end; at += static_cast<long>(kBlock)) {
    const size_t n = static_cast<size_t>(std::min<long>(end - at, static_cast<long>(kBlock) + 16));
    buf.resize(n);
    if (std::fseek(f.get(), at, SEEK_SET) != 0 || std::fread(buf.data(), 1, n, f.get()) != n) return;
    for (size_t i = 0; i + 16 <= n && i < kBlock; ++i) {
      if (buf[i] != 'G' || std::memcmp(&buf[i], "GCOL", 4) != 0) continue;
      const uint64_t size = little_endian(&buf[i + 8], 8);
      const uint64_t rest = static_cast<uint64_t>(end - at) - i;
      if (size < 16 || size > rest) continue;
      std::vector<unsigned char> c(static_cast<size_t>(size));
      if (std::fseek(f.get(), at + static_cast<long>(i), SEEK_SET) != 0 || std::fread(c.data(), 1, c.size(), f.get()) != c.size())
        return;
      if (!collection_walk_ends(c.data(), size))
        throw InputError(path, "", "has a corrupt global heap collection at byte " + std::to_string(at + long(i)) +
                                       " (where variable-length strings are kept); the file is corrupt");
    }
  }
}

}  // namespace

// ----------------------------------------------------------------- writer

struct H5Writer::Impl {
  AtomicFile temp;
  Hid file;
  Hid lcpl;  // creates intermediate groups
  bool committed = false;

  explicit Impl(const std::string& target) : temp(target) {}

  [[noreturn]] void fail(const std::string& what) const {
    throw WorkError("cannot write " + temp.target() + ": " + what);
  }

  hid_t fid() const {
    if (!file.ok()) fail("the file was already committed");
    return file.get();
  }

  // Opens (creating as a group when absent) the object an attribute goes on.
  Hid open_object(const std::string& object) {
    const std::string p = normalise(object);
    if (!link_exists(fid(), p)) {
      Hid g(H5Gcreate2(fid(), p.c_str(), lcpl.get(), H5P_DEFAULT, H5P_DEFAULT), H5Gclose);
      if (!g.ok()) fail("cannot create group " + p);
    }
    Hid o(H5Oopen(fid(), p.c_str(), H5P_DEFAULT), H5Oclose);
    if (!o.ok()) fail("cannot open " + p);
    return o;
  }

  void write_dataset(const std::string& path, const Shape& shape, hid_t ftype, hid_t mtype, const void* data) {
    silence_hdf5();
    const std::string p = normalise(path);
    if (link_exists(fid(), p)) fail("dataset " + p + " written twice");
    Hid space = make_space(shape);
    Hid ds(H5Dcreate2(fid(), p.c_str(), ftype, space.get(), lcpl.get(), H5P_DEFAULT, H5P_DEFAULT), H5Dclose);
    if (!ds.ok()) fail("cannot create dataset " + p);
    if (shape.size() > 0 && H5Dwrite(ds.get(), mtype, H5S_ALL, H5S_ALL, H5P_DEFAULT, data) < 0)
      fail("cannot write dataset " + p);
  }

  void write_attribute(const std::string& object, const std::string& name, hid_t ftype, hid_t mtype,
                       const Shape& shape, const void* data) {
    Hid o = open_object(object);
    if (H5Aexists(o.get(), name.c_str()) > 0) H5Adelete(o.get(), name.c_str());
    Hid space = make_space(shape);
    Hid a(H5Acreate2(o.get(), name.c_str(), ftype, space.get(), H5P_DEFAULT, H5P_DEFAULT), H5Aclose);
    if (!a.ok() || H5Awrite(a.get(), mtype, data) < 0)
      fail("cannot write attribute " + name + " on " + normalise(object));
  }
};

// The file is built in memory (HDF5's "core" driver without a backing store)
// and written to disk by commit() with checked POSIX writes. HDF5 therefore
// never writes to disk itself: a full disk or a read-only folder is a checked
// error of ours, and no file handle is ever left half-closed inside the
// library (which would crash in the library's clean-up at exit).
H5Writer::H5Writer(const std::string& target) : impl_(std::make_unique<Impl>(target)) {
  silence_hdf5();
  Hid fapl(H5Pcreate(H5P_FILE_ACCESS), H5Pclose);
  if (!fapl.ok() || H5Pset_fapl_core(fapl.get(), size_t{1} << 20, 0) < 0 ||
      H5Pset_fclose_degree(fapl.get(), H5F_CLOSE_STRONG) < 0)
    impl_->fail("cannot set up the in-memory file");
  impl_->file = Hid(H5Fcreate(impl_->temp.temp_path().c_str(), H5F_ACC_TRUNC, H5P_DEFAULT, fapl.get()), H5Fclose);
  if (!impl_->file.ok()) impl_->fail("cannot create the file in memory");
  impl_->lcpl = Hid(H5Pcreate(H5P_LINK_CREATE), H5Pclose);
  H5Pset_create_intermediate_group(impl_->lcpl.get(), 1);
  H5Pset_char_encoding(impl_->lcpl.get(), H5T_CSET_UTF8);
  write_attr("/", "research_use_only", int64_t{1});
  write_attr("/", "producer", producer_string());
}

H5Writer::~H5Writer() {
  // Close before the AtomicFile member removes the temporary file.
  if (impl_) impl_->file.reset();
}

void H5Writer::write(const std::string& path, const NdArray<float>& a) {
  impl_->write_dataset(path, a.shape, file_type<float>(), native_type<float>(), a.ptr());
}
void H5Writer::write(const std::string& path, const NdArray<double>& a) {
  impl_->write_dataset(path, a.shape, file_type<double>(), native_type<double>(), a.ptr());
}
void H5Writer::write(const std::string& path, const NdArray<uint8_t>& a) {
  impl_->write_dataset(path, a.shape, file_type<uint8_t>(), native_type<uint8_t>(), a.ptr());
}
void H5Writer::write(const std::string& path, const NdArray<int64_t>& a) {
  impl_->write_dataset(path, a.shape, file_type<int64_t>(), native_type<int64_t>(), a.ptr());
}
void H5Writer::write(const std::string& path, const NdArray<cfloat>& a) {
  Hid ftype = make_complex_type(H5T_IEEE_F32LE);
  Hid mtype = make_complex_type(H5T_NATIVE_FLOAT);
  impl_->write_dataset(path, a.shape, ftype.get(), mtype.get(), a.ptr());
}

void H5Writer::write_attr(const std::string& object, const std::string& name, double v) {
  impl_->write_attribute(object, name, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, Shape{}, &v);
}
void H5Writer::write_attr(const std::string& object, const std::string& name, int64_t v) {
  impl_->write_attribute(object, name, H5T_STD_I64LE, H5T_NATIVE_INT64, Shape{}, &v);
}
void H5Writer::write_attr(const std::string& object, const std::string& name, const std::string& v) {
  // Variable-length UTF-8 string: h5py returns it as str.
  Hid t(H5Tcopy(H5T_C_S1), H5Tclose);
  H5Tset_size(t.get(), H5T_VARIABLE);
  H5Tset_cset(t.get(), H5T_CSET_UTF8);
  const char* p = v.c_str();
  impl_->write_attribute(object, name, t.get(), t.get(), Shape{}, &p);
}
void H5Writer::write_attr(const std::string& object, const std::string& name, const std::vector<double>& v) {
  impl_->write_attribute(object, name, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, Shape{static_cast<Index>(v.size())},
                         v.data());
}

void H5Writer::write_attr(const std::string& object, const std::string& name, const std::vector<int64_t>& v) {
  impl_->write_attribute(object, name, H5T_STD_I64LE, H5T_NATIVE_INT64, Shape{static_cast<Index>(v.size())},
                         v.data());
}

void H5Writer::commit() {
  silence_hdf5();
  if (!impl_->file.ok()) impl_->fail("commit() called twice");
  if (H5Fflush(impl_->file.get(), H5F_SCOPE_GLOBAL) < 0) impl_->fail("flushing the in-memory file failed");
  const ssize_t size = H5Fget_file_image(impl_->file.get(), nullptr, 0);
  if (size <= 0) impl_->fail("cannot take the in-memory file image");
  std::vector<char> image(static_cast<size_t>(size));
  if (H5Fget_file_image(impl_->file.get(), image.data(), image.size()) != size)
    impl_->fail("cannot copy the in-memory file image");
  impl_->file.reset();  // in memory only: closing cannot fail on disk
  write_bytes_checked(impl_->temp.temp_path(), image.data(), image.size(), impl_->temp.target());
  impl_->temp.commit();
  impl_->committed = true;
}

// ----------------------------------------------------------------- reader

struct H5Reader::Impl {
  std::string path;
  Hid file;
  mutable bool heaps_checked = false;

  // Before the first read of variable-length data.
  void check_heaps() const {
    if (heaps_checked) return;
    require_sane_global_heaps(path);
    heaps_checked = true;
  }

  [[noreturn]] void bad(const std::string& field, const std::string& reason) const {
    throw InputError(path, field, reason);
  }

  Hid open_dataset(const std::string& dataset) const {
    silence_hdf5();
    const std::string p = normalise(dataset);
    if (!link_exists(file.get(), p)) bad(p, "dataset is missing");
    H5L_info_t linfo;
    const bool external = H5Lget_info(file.get(), p.c_str(), &linfo, H5P_DEFAULT) >= 0 && linfo.type == H5L_TYPE_EXTERNAL;
    const bool soft = H5Lget_info(file.get(), p.c_str(), &linfo, H5P_DEFAULT) >= 0 && linfo.type == H5L_TYPE_SOFT;
    H5O_info_t info;
    if (H5Oget_info_by_name(file.get(), p.c_str(), &info, H5P_DEFAULT) < 0) {
      if (external) bad(p, "is an external link whose target file or object cannot be found (dangling link)");
      if (soft) bad(p, "is a soft link whose target does not exist (dangling link)");
      bad(p, "cannot be opened (the file may be corrupt)");
    }
    if (info.type != H5O_TYPE_DATASET) bad(p, info.type == H5O_TYPE_GROUP ? "is a group, not a dataset" : "is not a dataset");
    Hid ds(H5Dopen2(file.get(), p.c_str(), H5P_DEFAULT), H5Dclose);
    if (!ds.ok()) bad(p, "cannot open dataset (the file may be corrupt)");
    require_filters_available(ds.get(), p);
    return ds;
  }

  // Compressed or otherwise filtered data needs the filter in this HDF5 library.
  void require_filters_available(hid_t ds, const std::string& p) const {
    Hid dcpl(H5Dget_create_plist(ds), H5Pclose);
    if (!dcpl.ok()) return;
    const int n = H5Pget_nfilters(dcpl.get());
    for (int i = 0; i < n; ++i) {
      unsigned flags = 0, config = 0;
      size_t nvals = 0;
      char name[128] = {0};
      const H5Z_filter_t id = H5Pget_filter2(dcpl.get(), static_cast<unsigned>(i), &flags, &nvals, nullptr,
                                             sizeof name, name, &config);
      if (id < 0) bad(p, "has an unreadable filter pipeline (the file may be corrupt)");
      if (H5Zfilter_avail(id) <= 0) {
        std::string label = name[0] ? std::string("'") + name + "' " : std::string();
        bad(p, "is stored with filter " + label + "(id " + std::to_string(id) +
                   ") that this HDF5 library does not have; rewrite it uncompressed or with gzip");
      }
    }
  }

  // Shape checked against the size limits before anything is allocated.
  Shape checked_shape(hid_t ds, const std::string& p, size_t bytes_per_element, const std::string& what) const {
    const Shape s = shape_of(ds);
    require_allocatable(s, bytes_per_element, what, path, p);
    return s;
  }

  Shape shape_of(hid_t ds) const {
    Hid space(H5Dget_space(ds), H5Sclose);
    const int rank = H5Sget_simple_extent_ndims(space.get());
    if (rank < 0) bad("", "a dataspace cannot be read (the file may be corrupt)");
    if (H5Sget_simple_extent_type(space.get()) == H5S_NULL) return Shape{0};
    std::vector<hsize_t> dims(static_cast<size_t>(std::max(rank, 0)));
    if (rank > 0) H5Sget_simple_extent_dims(space.get(), dims.data(), nullptr);
    Shape s;
    for (hsize_t d : dims) s.dims.push_back(static_cast<Index>(d));
    return s;
  }

  // Reads a real numeric dataset converted to T.
  template <typename T>
  NdArray<T> read_real(const std::string& dataset, bool integers_only) const {
    const std::string p = normalise(dataset);
    Hid ds = open_dataset(p);
    Hid t(H5Dget_type(ds.get()), H5Tclose);
    const H5T_class_t c = H5Tget_class(t.get());
    const bool ok = integers_only ? c == H5T_INTEGER : (c == H5T_INTEGER || c == H5T_FLOAT);
    if (!ok)
      bad(p, "has type " + describe_type(t.get()) + ", expected " +
                 (integers_only ? std::string("an integer type") : std::string("a real integer or float type")));
    NdArray<T> out(checked_shape(ds.get(), p, sizeof(T), describe_type(t.get())));
    if (out.size() > 0 && H5Dread(ds.get(), native_type<T>(), H5S_ALL, H5S_ALL, H5P_DEFAULT, out.ptr()) < 0)
      bad(p, "cannot read dataset (type " + describe_type(t.get()) + "): the data is corrupt, truncated or out of the type's range");
    return out;
  }

  Hid open_attr(const std::string& object, const std::string& name) const {
    silence_hdf5();
    const std::string p = normalise(object);
    if (!link_exists(file.get(), p)) bad(p, "object is missing (looking for attribute '" + name + "')");
    const htri_t e = H5Aexists_by_name(file.get(), p.c_str(), name.c_str(), H5P_DEFAULT);
    if (e < 0) bad(p, "has an attribute that cannot be decoded (the file is corrupt)");
    if (e == 0) bad(p, "attribute '" + name + "' is missing");
    Hid a(H5Aopen_by_name(file.get(), p.c_str(), name.c_str(), H5P_DEFAULT, H5P_DEFAULT), H5Aclose);
    if (!a.ok()) bad(p, "cannot open attribute '" + name + "'");
    return a;
  }

  hssize_t attr_count(hid_t a) const {
    Hid space(H5Aget_space(a), H5Sclose);
    return H5Sget_simple_extent_npoints(space.get());
  }

  std::vector<double> attr_numbers(const std::string& object, const std::string& name) const {
    Hid a = open_attr(object, name);
    Hid t(H5Aget_type(a.get()), H5Tclose);
    const H5T_class_t c = H5Tget_class(t.get());
    if (c != H5T_INTEGER && c != H5T_FLOAT)
      bad(normalise(object), "attribute '" + name + "' has type " + describe_type(t.get()) + ", expected a number");
    const hssize_t count = attr_count(a.get());
    if (count < 0 || count > (hssize_t{1} << 24))
      bad(normalise(object), "attribute '" + name + "' has " + std::to_string(count) + " values; expected a few numbers");
    std::vector<double> v(static_cast<size_t>(count));
    if (!v.empty() && H5Aread(a.get(), H5T_NATIVE_DOUBLE, v.data()) < 0)
      bad(normalise(object), "cannot read attribute '" + name + "'");
    return v;
  }
};

H5Reader::H5Reader(const std::string& path) : impl_(std::make_unique<Impl>()) {
  silence_hdf5();
  impl_->path = path;
  require_regular_file(path);
  const htri_t is_h5 = H5Fis_hdf5(path.c_str());
  if (is_h5 <= 0) throw InputError(path, "", "is not an HDF5 file (or cannot be read)");
  require_consistent_end_of_file(path);
  Hid fapl(H5Pcreate(H5P_FILE_ACCESS), H5Pclose);
  H5Pset_fclose_degree(fapl.get(), H5F_CLOSE_STRONG);
  impl_->file = Hid(H5Fopen(path.c_str(), H5F_ACC_RDONLY, fapl.get()), H5Fclose);
  if (!impl_->file.ok()) throw InputError(path, "", "cannot open the HDF5 file (truncated or corrupt)");
}

H5Reader::~H5Reader() = default;

const std::string& H5Reader::file() const { return impl_->path; }

bool H5Reader::has(const std::string& path) const { return link_exists(impl_->file.get(), path); }

bool H5Reader::is_group(const std::string& path) const {
  const std::string p = normalise(path);
  if (!has(p)) return false;
  H5O_info_t info;
  if (H5Oget_info_by_name(impl_->file.get(), p.c_str(), &info, H5P_DEFAULT) < 0) return false;
  return info.type == H5O_TYPE_GROUP;
}

std::vector<std::string> H5Reader::children(const std::string& group) const {
  const std::string p = normalise(group);
  if (!has(p)) impl_->bad(p, "group is missing");
  Hid g(H5Gopen2(impl_->file.get(), p.c_str(), H5P_DEFAULT), H5Gclose);
  if (!g.ok()) impl_->bad(p, "is not a group");
  std::vector<std::string> names;
  auto cb = [](hid_t, const char* name, const H5L_info_t*, void* data) -> herr_t {
    static_cast<std::vector<std::string>*>(data)->push_back(name);
    return 0;
  };
  if (H5Literate(g.get(), H5_INDEX_NAME, H5_ITER_INC, nullptr, cb, &names) < 0)
    impl_->bad(p, "its members cannot be listed (the file is corrupt)");
  std::sort(names.begin(), names.end());
  return names;
}

Shape H5Reader::shape(const std::string& dataset) const {
  Hid ds = impl_->open_dataset(dataset);
  return impl_->shape_of(ds.get());
}

bool H5Reader::is_complex(const std::string& dataset) const {
  Hid ds = impl_->open_dataset(dataset);
  Hid t(H5Dget_type(ds.get()), H5Tclose);
  return is_complex_type(t.get());
}

std::string H5Reader::type_name(const std::string& dataset) const {
  Hid ds = impl_->open_dataset(dataset);
  Hid t(H5Dget_type(ds.get()), H5Tclose);
  return describe_type(t.get());
}

NdArray<float> H5Reader::read_float(const std::string& dataset) const {
  return impl_->read_real<float>(dataset, false);
}
NdArray<double> H5Reader::read_double(const std::string& dataset) const {
  return impl_->read_real<double>(dataset, false);
}
NdArray<uint8_t> H5Reader::read_u8(const std::string& dataset) const {
  return impl_->read_real<uint8_t>(dataset, true);
}
NdArray<int64_t> H5Reader::read_int(const std::string& dataset) const {
  return impl_->read_real<int64_t>(dataset, true);
}

NdArray<cfloat> H5Reader::read_complex(const std::string& dataset) const {
  const std::string p = normalise(dataset);
  Hid ds = impl_->open_dataset(p);
  Hid t(H5Dget_type(ds.get()), H5Tclose);
  if (is_complex_type(t.get())) {
    NdArray<cfloat> out(impl_->checked_shape(ds.get(), p, sizeof(cfloat), "complex64"));
    Hid mtype = make_complex_type(H5T_NATIVE_FLOAT);
    if (out.size() > 0 && H5Dread(ds.get(), mtype.get(), H5S_ALL, H5S_ALL, H5P_DEFAULT, out.ptr()) < 0)
      impl_->bad(p, "cannot read complex dataset: the data is corrupt or truncated");
    return out;
  }
  const H5T_class_t c = H5Tget_class(t.get());
  if (c != H5T_INTEGER && c != H5T_FLOAT)
    impl_->bad(p, "has type " + describe_type(t.get()) + ", expected complex64 ({r,i} compound) or a real type");
  impl_->checked_shape(ds.get(), p, sizeof(cfloat), "complex64");
  NdArray<float> re = impl_->read_real<float>(p, false);
  NdArray<cfloat> out(re.shape);
  for (Index i = 0; i < re.size(); ++i) out.data[static_cast<size_t>(i)] = cfloat(re.data[static_cast<size_t>(i)], 0.f);
  return out;
}

bool H5Reader::has_attr(const std::string& object, const std::string& name) const {
  const std::string p = normalise(object);
  if (!has(p)) return false;
  const htri_t e = H5Aexists_by_name(impl_->file.get(), p.c_str(), name.c_str(), H5P_DEFAULT);
  if (e < 0) impl_->bad(p, "has an attribute that cannot be decoded (the file is corrupt)");
  return e > 0;
}

std::vector<std::string> H5Reader::attr_names(const std::string& object) const {
  const std::string p = normalise(object);
  if (!has(p)) impl_->bad(p, "object is missing");
  Hid o(H5Oopen(impl_->file.get(), p.c_str(), H5P_DEFAULT), H5Oclose);
  if (!o.ok()) impl_->bad(p, "cannot open object");
  // HDF5 1.10.8 iterates over the attributes of an object header (compact
  // storage, which recofold's and h5py's default files use) through a table of
  // them; when one attribute message does not decode, it frees the half-built
  // table, pointers never set included, and crashes (a fuzz finding). Looking
  // up a name that no attribute has decodes every message one by one and
  // fails cleanly instead, so that runs first.
  if (H5Aexists(o.get(), "\x01recofold: no such attribute") < 0)
    impl_->bad(p, "has an attribute that cannot be decoded (the file is corrupt)");
  std::vector<std::string> names;
  auto cb = [](hid_t, const char* name, const H5A_info_t*, void* data) -> herr_t {
    static_cast<std::vector<std::string>*>(data)->push_back(name);
    return 0;
  };
  if (H5Aiterate2(o.get(), H5_INDEX_NAME, H5_ITER_INC, nullptr, cb, &names) < 0)
    impl_->bad(p, "its attributes cannot be listed (the file is corrupt)");
  std::sort(names.begin(), names.end());
  return names;
}

double H5Reader::attr_double(const std::string& object, const std::string& name) const {
  const auto v = impl_->attr_numbers(object, name);
  if (v.size() != 1)
    impl_->bad(normalise(object), "attribute '" + name + "' has " + std::to_string(v.size()) +
                                      " values, expected one number");
  return v[0];
}

int64_t H5Reader::attr_int(const std::string& object, const std::string& name) const {
  const double v = attr_double(object, name);
  if (!(std::floor(v) == v) || std::fabs(v) > 9.0e15)
    impl_->bad(normalise(object), "attribute '" + name + "' is not an integer");
  return static_cast<int64_t>(v);
}

std::vector<double> H5Reader::attr_doubles(const std::string& object, const std::string& name) const {
  return impl_->attr_numbers(object, name);
}

std::string H5Reader::attr_string(const std::string& object, const std::string& name) const {
  const std::string p = normalise(object);
  Hid a = impl_->open_attr(p, name);
  Hid t(H5Aget_type(a.get()), H5Tclose);
  if (H5Tget_class(t.get()) != H5T_STRING)
    impl_->bad(p, "attribute '" + name + "' has type " + describe_type(t.get()) + ", expected a string");
  if (impl_->attr_count(a.get()) != 1) impl_->bad(p, "attribute '" + name + "' is not a single string");
  if (H5Tis_variable_str(t.get()) > 0) {
    Hid mt(H5Tcopy(H5T_C_S1), H5Tclose);
    H5Tset_size(mt.get(), H5T_VARIABLE);
    H5Tset_cset(mt.get(), H5Tget_cset(t.get()));
    char* s = nullptr;
    impl_->check_heaps();
    if (H5Aread(a.get(), mt.get(), &s) < 0) impl_->bad(p, "cannot read attribute '" + name + "'");
    std::string out = s ? s : "";
    H5free_memory(s);
    return out;
  }
  const size_t n = H5Tget_size(t.get());
  std::string buf(n, '\0');
  Hid mt(H5Tcopy(t.get()), H5Tclose);
  if (H5Aread(a.get(), mt.get(), buf.data()) < 0) impl_->bad(p, "cannot read attribute '" + name + "'");
  const auto end = buf.find('\0');
  if (end != std::string::npos) buf.resize(end);
  return buf;
}

std::string H5Reader::attr_as_text(const std::string& object, const std::string& name) const {
  const std::string p = normalise(object);
  H5T_class_t c;
  {
    Hid a = impl_->open_attr(p, name);
    Hid t(H5Aget_type(a.get()), H5Tclose);
    c = H5Tget_class(t.get());
    if (c != H5T_STRING && c != H5T_INTEGER && c != H5T_FLOAT) return "<" + describe_type(t.get()) + ">";
    if (c == H5T_STRING && impl_->attr_count(a.get()) != 1) return "<string array>";
  }
  if (c == H5T_STRING) return attr_string(p, name);
  const auto v = impl_->attr_numbers(p, name);
  std::ostringstream ss;
  ss.precision(10);
  if (v.size() != 1) ss << "[";
  for (size_t i = 0; i < v.size(); ++i) ss << (i ? ", " : "") << v[i];
  if (v.size() != 1) ss << "]";
  return ss.str();
}

}  // namespace recofold
