// SPDX-License-Identifier: Apache-2.0
// Image export/import (ITK itself is behind itk_bridge.h), PNG windowing, format dispatch.
#include "recofold/io/image_export.h"

#include <sys/stat.h>
#include <unistd.h>
#include <zlib.h>

#include <algorithm>
#include <atomic>
#include <cerrno>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <limits>

#include "itk_bridge.h"
#include "recofold/io/dicom_file.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/checks.h"
#include "recofold/core/error.h"
#include "recofold/io/image_file.h"

namespace recofold {

namespace {

std::atomic<unsigned> g_temp_counter{0};

// A temporary path beside the target that keeps the target's extension (ITK
// picks compression and header layout from the name), renamed on commit and
// removed otherwise.
class TempSibling {
 public:
  explicit TempSibling(const std::string& target) : target_(target) {
    const auto slash = target.find_last_of('/');
    const std::string dir = slash == std::string::npos ? "" : target.substr(0, slash + 1);
    const std::string base = slash == std::string::npos ? target : target.substr(slash + 1);
    temp_ = dir + ".tmp-" + std::to_string(::getpid()) + "-" + std::to_string(g_temp_counter++) + "-" + base;
  }
  ~TempSibling() {
    if (!committed_) std::remove(temp_.c_str());
  }
  TempSibling(const TempSibling&) = delete;
  TempSibling& operator=(const TempSibling&) = delete;
  const std::string& path() const { return temp_; }
  void commit() {
    struct stat st;
    if (::stat(target_.c_str(), &st) == 0 && S_ISDIR(st.st_mode))
      throw WorkError("cannot write " + target_ + ": it is a directory");
    if (std::rename(temp_.c_str(), target_.c_str()) != 0)
      throw WorkError("cannot move finished output into place at " + target_ + ": " + std::strerror(errno));
    committed_ = true;
    remove_orphaned_temporaries(target_);
  }

 private:
  std::string target_, temp_;
  bool committed_ = false;
};

void put_u32(std::string& out, uint32_t v) {
  for (int shift = 24; shift >= 0; shift -= 8) out.push_back(static_cast<char>((v >> shift) & 0xFF));
}

void put_chunk(std::string& out, const char* type, const std::string& data) {
  put_u32(out, static_cast<uint32_t>(data.size()));
  const size_t start = out.size();
  out.append(type, 4);
  out += data;
  const uLong crc = crc32(0L, reinterpret_cast<const Bytef*>(out.data() + start), static_cast<uInt>(out.size() - start));
  put_u32(out, static_cast<uint32_t>(crc));
}

// A grey PNG (colour type 0, 8 or 16 bits, no interlace), row 0 on top, with
// a tEXt chunk carrying the research-use line (PNG specification, ISO/IEC
// 15948: signature, IHDR, IDAT holding the zlib stream of filter-type-0 rows,
// IEND; CRC-32 over type and data of each chunk; written from memory).
std::string encode_png(size_t nx, size_t ny, const std::vector<uint16_t>& levels, int bits, const std::string& target) {
  const size_t bytes_per_px = bits == 16 ? 2 : 1;
  std::string raw;
  raw.reserve(ny * (1 + nx * bytes_per_px));
  for (size_t y = 0; y < ny; ++y) {
    raw.push_back('\0');  // filter type 0 (none)
    for (size_t x = 0; x < nx; ++x) {
      const uint16_t v = levels[y * nx + x];
      if (bits == 16) raw.push_back(static_cast<char>(v >> 8));
      raw.push_back(static_cast<char>(v & 0xFF));
    }
  }
  uLongf zlen = compressBound(static_cast<uLong>(raw.size()));
  std::string z(zlen, '\0');
  if (compress2(reinterpret_cast<Bytef*>(z.data()), &zlen, reinterpret_cast<const Bytef*>(raw.data()),
                static_cast<uLong>(raw.size()), 6) != Z_OK)
    throw WorkError("cannot write " + target + ": PNG compression failed");
  z.resize(zlen);
  std::string out("\x89PNG\r\n\x1a\n", 8);
  std::string ihdr;
  put_u32(ihdr, static_cast<uint32_t>(nx));
  put_u32(ihdr, static_cast<uint32_t>(ny));
  ihdr.push_back(static_cast<char>(bits));
  ihdr.append(std::string("\0\0\0\0", 4));  // grey, deflate, filter 0, no interlace
  put_chunk(out, "IHDR", ihdr);
  put_chunk(out, "tEXt", std::string("Comment") + '\0' + kResearchUseLine);
  put_chunk(out, "IDAT", z);
  put_chunk(out, "IEND", "");
  return out;
}

float real_value(const ImageRecord& rec, size_t i) {
  const cfloat z = rec.pixels.data[i];
  return rec.is_complex ? std::abs(z) : z.real();
}

}  // namespace

std::vector<std::string> PngWindow::validate() const {
  std::vector<std::string> errors;
  if (bits != 8 && bits != 16) errors.push_back("png.bits = " + std::to_string(bits) + "; must be 8 or 16");
  if (!auto_window) {
    if (!std::isfinite(lo) || !std::isfinite(hi))
      errors.push_back("png.lo/hi = " + std::to_string(lo) + "/" + std::to_string(hi) + "; must be finite");
    else if (!(hi > lo))
      errors.push_back("png.hi = " + std::to_string(hi) + "; must be > png.lo = " + std::to_string(lo));
  }
  return errors;
}

void write_png(const std::string& path, const ImageF& img, const PngWindow& w) {
  const auto errors = w.validate();
  if (!errors.empty()) {
    std::string msg;
    for (const auto& e : errors) msg += (msg.empty() ? "" : "; ") + e;
    throw InputError(path, "png window", msg);
  }
  if (img.size() == 0) throw WorkError("cannot write " + path + ": the image is empty");
  double lo = w.lo, hi = w.hi;
  if (w.auto_window) {
    lo = std::numeric_limits<double>::infinity();
    hi = -lo;
    const float* d = img.data();
    for (Index i = 0; i < img.size(); ++i) {
      if (!std::isfinite(d[i])) continue;
      lo = std::min(lo, static_cast<double>(d[i]));
      hi = std::max(hi, static_cast<double>(d[i]));
    }
    if (!(hi > lo)) hi = lo;  // constant (or all non-finite): black
  }
  const double top = w.bits == 16 ? 65535.0 : 255.0;
  const double scale = hi > lo ? top / (hi - lo) : 0.0;
  std::vector<uint16_t> levels(static_cast<size_t>(img.size()));
  const float* in = img.data();
  for (Index i = 0; i < img.size(); ++i) {
    double v = (static_cast<double>(in[i]) - lo) * scale;
    if (!(v >= 0)) v = 0;  // also NaN: black
    if (v > top) v = top;
    levels[static_cast<size_t>(i)] = static_cast<uint16_t>(std::lround(v));
  }
  const std::string bytes =
      encode_png(static_cast<size_t>(img.cols()), static_cast<size_t>(img.rows()), levels, w.bits, path);
  TempSibling temp(path);
  write_bytes_checked(temp.path(), bytes.data(), bytes.size(), path);
  temp.commit();
}

void export_image(const std::string& path, const ImageRecord& rec) {
  const std::string ext = file_extension(path);
  if (ext == ".png" || !internal::itk_handles(ext))
    throw InputError(path, "", "unsupported extension '" + ext + "' for export (expected .nii.gz, .nii, .mha, .nrrd)");
  const Shape& s = rec.pixels.shape;
  if (s.rank() < 2 || s.rank() > 3 || s.size() == 0 || rec.pixels.size() != s.size())
    throw WorkError("cannot write " + path + ": image shape " + s.to_string() + " is not [ny, nx] or [count, ny, nx]");
  internal::PlainImage p;
  p.size = {static_cast<size_t>(s[s.rank() - 1]), static_cast<size_t>(s[s.rank() - 2])};
  p.spacing = {rec.pixel_spacing_mm[1], rec.pixel_spacing_mm[0]};
  if (s.rank() == 3) {
    p.size.push_back(static_cast<size_t>(s[0]));
    p.spacing.push_back(1.0);
  }
  p.values.resize(rec.pixels.data.size());
  for (size_t i = 0; i < p.values.size(); ++i) p.values[i] = real_value(rec, i);
  TempSibling temp(path);
  internal::itk_write_float(temp.path(), path, ext, p);
  temp.commit();
}

ImageRecord import_image(const std::string& path) {
  const std::string ext = file_extension(path);
  // A folder is a DICOM series unless its name carries another format's extension.
  if (is_dicom_input(path) && !internal::itk_handles(ext) && ext != ".h5") return read_dicom(path);
  if (!internal::itk_handles(ext))
    throw InputError(path, "", "unsupported extension '" + ext + "' (expected .h5, .nii.gz, .nii, .mha, .nrrd, .png)");
  require_regular_file(path);
  const internal::PlainImage p = internal::itk_read(
      path, ext, [&path](const std::vector<size_t>& size, unsigned components, size_t component_bytes) {
        // ITK order (x first) to ours (slowest first), checked before any pixel is read.
        Shape s;
        for (auto it = size.rbegin(); it != size.rend(); ++it) s.dims.push_back(static_cast<Index>(*it));
        require_allocatable(s, sizeof(float) + components * component_bytes, "pixels", path, "image header");
      });
  ImageRecord rec;
  const Index nx = static_cast<Index>(p.size[0]), ny = static_cast<Index>(p.size[1]);
  rec.pixels = NdArray<cfloat>(p.size.size() == 3 ? Shape{static_cast<Index>(p.size[2]), ny, nx} : Shape{ny, nx});
  for (size_t i = 0; i < rec.pixels.data.size(); ++i) rec.pixels.data[i] = cfloat(p.values[i], 0.f);
  require_finite(rec.pixels.ptr(), rec.pixels.size(), path, "pixels");
  rec.is_complex = false;
  rec.pixel_spacing_mm[0] = p.spacing[1] > 0 && std::isfinite(p.spacing[1]) ? p.spacing[1] : 1.0;
  rec.pixel_spacing_mm[1] = p.spacing[0] > 0 && std::isfinite(p.spacing[0]) ? p.spacing[0] : 1.0;
  rec.description = "imported from " + path;
  return rec;
}

bool is_image_extension(const std::string& ext) {
  return ext == ".h5" || ext == ".dcm" || internal::itk_handles(ext);
}

ImageF image_slice(const ImageRecord& rec, Index index, const std::string& file) {
  const Shape& s = rec.pixels.shape;
  if (s.rank() < 2 || s.rank() > 3) throw InputError(file, "/image", "shape " + s.to_string() + " is not an image");
  const Index count = s.rank() == 3 ? s[0] : 1;
  if (index < 0 || index >= count)
    throw InputError(file, "index", "index " + std::to_string(index) + " is out of range; the file holds " +
                                          std::to_string(count) + " image(s)");
  const Index ny = s[s.rank() - 2], nx = s[s.rank() - 1];
  ImageF out(ny, nx);
  const size_t off = static_cast<size_t>(index * ny * nx);
  for (Index i = 0; i < ny * nx; ++i) {
    const cfloat z = rec.pixels.data[off + static_cast<size_t>(i)];
    out.data()[i] = rec.is_complex ? std::abs(z) : z.real();
  }
  return out;
}

void write_image_any(const std::string& path, const ImageRecord& rec, const Provenance& prov, const PngWindow& w) {
  const std::string ext = file_extension(path);
  if (ext == ".h5") {
    write_image_file(path, rec, prov);
  } else if (ext == ".png") {
    const Shape& s = rec.pixels.shape;
    if (s.rank() == 3 && s[0] != 1)
      throw InputError(path, "", "a PNG holds one 2-D image; this record is a stack " + s.to_string() +
                                     " (pick one image or use .h5/.nii.gz/.mha/.nrrd)");
    write_png(path, image_slice(rec, 0, path), w);
  } else if (internal::itk_handles(ext)) {
    export_image(path, rec);
  } else if (ext == ".dcm") {
    write_dicom(path, rec);
  } else {
    throw InputError(path, "", "unsupported extension '" + ext + "' (expected .h5, .nii.gz, .nii, .mha, .nrrd, .png)");
  }
}

ImageRecord read_image_any(const std::string& path) {
  if (file_extension(path) == ".h5") return read_image_file(path);
  return import_image(path);
}

}  // namespace recofold
