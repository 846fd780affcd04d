// SPDX-License-Identifier: Apache-2.0
// The only translation unit that includes ITK: NIfTI, MetaImage and NRRD
// readers and writers. PNG is written by image_export.cc itself (checked
// writes, no library abort on a full disk) and read by png_reader.cc with
// libpng directly (ITK's PNG reader lets libpng abort on a corrupt chunk).
#include "itk_bridge.h"

#include <sys/stat.h>
#include <sys/statvfs.h>
#include <zlib.h>

#include <itkImage.h>
#include <itkImageFileReader.h>
#include <itkImageFileWriter.h>
#include <itkMetaDataObject.h>
#include <itkMetaImageIO.h>
#include <itkNiftiImageIO.h>
#include <itkNrrdImageIO.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <fstream>
#include <regex>
#include <sstream>

#include "mha_header.h"
#include "png_reader.h"
#include "recofold/core/error.h"
#include "recofold/core/provenance.h"

namespace recofold::internal {

namespace {

void quiet_itk() {
  static const bool done = [] {
    itk::Object::GlobalWarningDisplayOff();
    return true;
  }();
  (void)done;
}

// Formats are picked by extension, never through ITK's factory.
itk::ImageIOBase::Pointer io_for(const std::string& ext) {
  if (ext == ".nii.gz" || ext == ".nii") return itk::NiftiImageIO::New().GetPointer();
  if (ext == ".mha") return itk::MetaImageIO::New().GetPointer();
  if (ext == ".nrrd") return itk::NrrdImageIO::New().GetPointer();
  return nullptr;
}

// ITK's exception text as one short line: without the "ITK ERROR: Class(0x...)"
// prefix, memory addresses, source locations and the multi-line traces of
// the NRRD library.
std::string one_line(const itk::ExceptionObject& e) {
  std::string text = e.GetDescription() ? e.GetDescription() : "";
  static const std::regex prefix(R"(ITK ERROR: [A-Za-z0-9_:]+\(0x[0-9a-fA-F]+\):\s*)");
  static const std::regex address(R"(\(?0x[0-9a-fA-F]+\)?)");
  static const std::regex nrrd_fn(R"(\[nrrd\] [A-Za-z0-9_]+:\s*)");
  text = std::regex_replace(text, prefix, "");
  text = std::regex_replace(text, nrrd_fn, "");
  text = std::regex_replace(text, address, "");
  std::istringstream in(text);
  std::string line, out;
  while (std::getline(in, line)) {
    line.erase(0, line.find_first_not_of(" \t"));
    while (!line.empty() && std::isspace(static_cast<unsigned char>(line.back()))) line.pop_back();
    if (line.empty() || line == "trouble" || line.back() == ':') continue;
    out = line;  // the last specific line says what went wrong
  }
  if (out.empty()) out = "the library gave no reason";
  if (out.size() > 200) out = out.substr(0, 197) + "...";
  return out;
}

// ------------------------------------------------ data length against the header

uint64_t file_size(const std::string& path) {
  struct stat st;
  return ::stat(path.c_str(), &st) == 0 ? static_cast<uint64_t>(st.st_size) : 0;
}

std::string read_prefix(const std::string& path, size_t max_bytes) {
  std::ifstream in(path, std::ios::binary);
  std::string s(max_bytes, '\0');
  in.read(s.data(), static_cast<std::streamsize>(max_bytes));
  s.resize(static_cast<size_t>(in.gcount()));
  return s;
}

// Inflates `in` (zlib or gzip stream, picked by `window_bits`) and counts the
// bytes; `ok` is false when the stream is corrupt or ends early.
uint64_t inflated_size(const unsigned char* in, size_t n, int window_bits, bool& ok) {
  z_stream zs;
  std::memset(&zs, 0, sizeof zs);
  ok = false;
  if (inflateInit2(&zs, window_bits) != Z_OK) return 0;
  std::vector<unsigned char> buf(1 << 16);
  zs.next_in = const_cast<unsigned char*>(in);
  zs.avail_in = static_cast<uInt>(std::min<size_t>(n, 0xFFFFFFFFu));
  uint64_t total = 0;
  int rc = Z_OK;
  while (rc == Z_OK) {
    zs.next_out = buf.data();
    zs.avail_out = static_cast<uInt>(buf.size());
    rc = inflate(&zs, Z_NO_FLUSH);
    total += buf.size() - zs.avail_out;
    if (rc == Z_BUF_ERROR || (rc == Z_OK && zs.avail_in == 0 && zs.avail_out != 0)) break;
  }
  ok = rc == Z_STREAM_END;
  inflateEnd(&zs);
  return total;
}

std::string whole_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

[[noreturn]] void short_data(const std::string& path, uint64_t have, uint64_t need) {
  throw InputError(path, "", "holds " + std::to_string(have) + " bytes of pixel data but its header declares " +
                                 std::to_string(need) + " (truncated or corrupt file)");
}

float nifti_float(const std::string& h, size_t off, bool swap) {
  unsigned char b[4];
  std::memcpy(b, h.data() + off, 4);
  if (swap) std::reverse(b, b + 4);
  float f;
  std::memcpy(&f, b, 4);
  return f;
}

// pixdim (bytes 76..107) and the quaternion, offsets and affine rows (256..327)
// of a NIfTI-1 header: ITK's NIfTI reader aborts the process (a failed
// finiteness assertion in its SVD) on a non-finite orientation, so they are
// checked first; |value| <= 1e6 keeps the matrices it builds finite.
void check_nifti_geometry(const std::string& path, const std::string& h, bool swap) {
  for (size_t off : {size_t(76), size_t(256)}) {
    const size_t end = off == 76 ? 108 : 328;
    for (size_t o = off; o < end; o += 4) {
      const float v = nifti_float(h, o, swap);
      if (!std::isfinite(v) || std::fabs(v) > 1e6f)
        throw InputError(path, "", "the NIfTI header has an invalid voxel size or orientation (non-finite or beyond 1e6)");
    }
  }
}

// Byte order as the NIfTI library decides it: dim[0] (bytes 40..41) of 1 to 7
// read natively means native order; 0 falls back to sizeof_hdr (348).
bool nifti_swapped(const std::string& h) {
  int16_t dim0;
  std::memcpy(&dim0, h.data() + 40, 2);
  if (dim0 >= 1 && dim0 <= 7) return false;
  if (dim0 != 0) return true;
  int32_t sizeof_hdr;
  std::memcpy(&sizeof_hdr, h.data(), 4);
  return sizeof_hdr != 348;
}

// Run before ITK reads the header: the first 348 bytes of a .nii or .nii.gz.
void check_nifti_geometry(const std::string& path, bool gz) {
  std::string h;
  if (gz) {
    h.assign(352, '\0');
    gzFile f = gzopen(path.c_str(), "rb");
    const int got = f ? gzread(f, h.data(), 352) : -1;
    if (f) gzclose(f);
    if (got < 348) return;  // ITK's reader refuses it
  } else {
    h = read_prefix(path, 352);
    if (h.size() < 348) return;
  }
  check_nifti_geometry(path, h, nifti_swapped(h));
}

void check_nifti_length(const std::string& path, bool gz, uint64_t need) {
  std::string data;
  uint64_t total = 0;
  if (gz) {
    data = whole_file(path);
    bool ok = false;
    // Inflate once to count; the header is then read from the start of the stream.
    total = inflated_size(reinterpret_cast<const unsigned char*>(data.data()), data.size(), 16 + MAX_WBITS, ok);
    if (!ok) throw InputError(path, "", "the gzip stream is truncated or corrupt");
    gzFile f = gzopen(path.c_str(), "rb");
    std::string h(352, '\0');
    const int got = f ? gzread(f, h.data(), 352) : -1;
    if (f) gzclose(f);
    if (got < 348) throw InputError(path, "", "is too short for a NIfTI-1 header");
    data = h;
  } else {
    data = read_prefix(path, 352);
    total = file_size(path);
    if (data.size() < 348) throw InputError(path, "", "is too short for a NIfTI-1 header");
  }
  const bool swap = nifti_swapped(data);
  const float vox_offset = nifti_float(data, 108, swap);
  if (!std::isfinite(vox_offset) || vox_offset < 0 || vox_offset > 1e9)
    throw InputError(path, "", "the NIfTI header has an invalid vox_offset");
  const uint64_t start = std::max<uint64_t>(352, static_cast<uint64_t>(vox_offset));
  const uint64_t have = total > start ? total - start : 0;
  if (have < need) short_data(path, have, need);
}

// Text header "key = value" / "key: value" lines up to `end`, lower-cased keys.
std::string header_value(const std::string& header, const std::string& key, char sep) {
  std::istringstream in(header);
  std::string line;
  while (std::getline(in, line)) {
    const auto p = line.find(sep);
    if (p == std::string::npos) continue;
    std::string k = line.substr(0, p);
    k.erase(k.find_last_not_of(" \t\r") + 1);
    k.erase(0, k.find_first_not_of(" \t"));
    std::transform(k.begin(), k.end(), k.begin(), [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
    if (k != key) continue;
    std::string v = line.substr(p + 1);
    v.erase(0, v.find_first_not_of(" \t"));
    v.erase(v.find_last_not_of(" \t\r") + 1);
    return v;
  }
  return "";
}

void check_metaimage_length(const std::string& path, uint64_t need) {
  const std::string data = whole_file(path);
  // The header ends with the line "ElementDataFile = LOCAL"; the data follows.
  size_t pos = 0, header_end = std::string::npos;
  while (pos < data.size()) {
    const auto nl = data.find('\n', pos);
    const std::string line = data.substr(pos, (nl == std::string::npos ? data.size() : nl) - pos);
    if (line.compare(0, 15, "ElementDataFile") == 0) {
      header_end = nl == std::string::npos ? data.size() : nl + 1;
      break;
    }
    if (nl == std::string::npos) break;
    pos = nl + 1;
  }
  if (header_end == std::string::npos) throw InputError(path, "", "the MetaImage header has no ElementDataFile line");
  const std::string header = data.substr(0, header_end);
  std::string where = header_value(header, "elementdatafile", '=');
  if (where != "LOCAL" && where != "local")
    throw InputError(path, "", "keeps its pixels in a separate file ('" + where +
                                   "'); a .mha file must hold them itself (ElementDataFile = LOCAL)");
  const std::string compressed = header_value(header, "compresseddata", '=');
  const uint64_t have_raw = data.size() - header_end;
  if (compressed == "True" || compressed == "true") {
    bool ok = false;
    const uint64_t have =
        inflated_size(reinterpret_cast<const unsigned char*>(data.data() + header_end), have_raw, MAX_WBITS, ok);
    if (!ok || have < need) short_data(path, have, need);
    return;
  }
  if (have_raw < need) short_data(path, have_raw, need);
}

void check_nrrd_length(const std::string& path, uint64_t need) {
  const std::string data = whole_file(path);
  size_t header_end = data.find("\n\n");
  size_t skip = 2;
  if (const size_t crlf = data.find("\r\n\r\n"); crlf != std::string::npos && crlf < header_end) {
    header_end = crlf;
    skip = 4;
  }
  if (header_end == std::string::npos) return;  // detached header: ITK reports what it finds
  const std::string header = data.substr(0, header_end);
  if (!header_value(header, "data file", ':').empty() || !header_value(header, "datafile", ':').empty()) return;
  if (!header_value(header, "line skip", ':').empty() || !header_value(header, "byte skip", ':').empty()) return;
  const std::string enc = header_value(header, "encoding", ':');
  const size_t start = header_end + skip;
  const uint64_t have_raw = data.size() > start ? data.size() - start : 0;
  if (enc == "raw") {
    if (have_raw < need) short_data(path, have_raw, need);
  } else if (enc == "gzip" || enc == "gz") {
    bool ok = false;
    const uint64_t have =
        inflated_size(reinterpret_cast<const unsigned char*>(data.data() + start), have_raw, 16 + MAX_WBITS, ok);
    if (!ok || have < need) short_data(path, have, need);
  }
}

void check_data_length(const std::string& path, const std::string& ext, uint64_t need) {
  if (ext == ".nii") check_nifti_length(path, false, need);
  else if (ext == ".nii.gz") check_nifti_length(path, true, need);
  else if (ext == ".mha") check_metaimage_length(path, need);
  else if (ext == ".nrrd") check_nrrd_length(path, need);
}

template <unsigned D>
void write_float_dim(const std::string& file_name, const std::string& target, itk::ImageIOBase* io,
                     const PlainImage& p) {
  using Img = itk::Image<float, D>;
  typename Img::SizeType size;
  typename Img::SpacingType spacing;
  for (unsigned d = 0; d < D; ++d) {
    size[d] = static_cast<itk::SizeValueType>(p.size[d]);
    spacing[d] = p.spacing[d];
  }
  auto img = Img::New();
  typename Img::RegionType region;
  region.SetSize(size);
  img->SetRegions(region);
  img->SetSpacing(spacing);
  img->Allocate();
  std::copy(p.values.begin(), p.values.end(), img->GetBufferPointer());
  // SAFETY.md: the research-use line goes into the header where the format
  // keeps free-text fields (MetaImage and NRRD store the dictionary's string
  // entries; Debian's ITK 5.2 NIfTI writer does not fill `descrip` from it).
  itk::MetaDataDictionary& dict = img->GetMetaDataDictionary();
  itk::EncapsulateMetaData<std::string>(dict, "ITK_FileNotes", kResearchUseLine);
  itk::EncapsulateMetaData<std::string>(dict, "research_use_only", "1");
  auto writer = itk::ImageFileWriter<Img>::New();
  writer->SetImageIO(io);
  writer->SetFileName(file_name);
  writer->SetInput(img);
  try {
    writer->Update();
  } catch (const itk::ExceptionObject& e) {
    throw WorkError("cannot write " + target + ": " + one_line(e));
  }
}

}  // namespace

bool itk_handles(const std::string& ext) { return ext == ".png" || io_for(ext) != nullptr; }

long long free_bytes_near(const std::string& path) {
  const auto slash = path.find_last_of('/');
  const std::string dir = slash == std::string::npos ? "." : (slash == 0 ? "/" : path.substr(0, slash));
  struct statvfs vfs;
  if (::statvfs(dir.c_str(), &vfs) != 0) return -1;
  return static_cast<long long>(vfs.f_bavail) * static_cast<long long>(vfs.f_frsize);
}

void itk_write_float(const std::string& file_name, const std::string& target, const std::string& ext,
                     const PlainImage& img) {
  quiet_itk();
  auto io = io_for(ext);
  if (!io || ext == ".png") throw WorkError("cannot write " + target + ": no float writer for '" + ext + "'");
  if (img.size.size() != 2 && img.size.size() != 3)
    throw WorkError("cannot write " + target + ": only 2-D and 3-D images are supported");
  // The writers of the NIfTI and MetaImage libraries do not report a short
  // write, so make sure the file fits first (compressed files are smaller; the
  // raw size is the bound), and read it back afterwards.
  const long long need = static_cast<long long>(img.values.size() * sizeof(float)) + 4096;
  const long long avail = free_bytes_near(file_name);
  if (avail >= 0 && avail < need)
    throw WorkError("cannot write " + target + ": not enough free space (needs up to " + std::to_string(need) +
                    " bytes, " + std::to_string(avail) + " free)");
  if (img.size.size() == 2)
    write_float_dim<2>(file_name, target, io.GetPointer(), img);
  else
    write_float_dim<3>(file_name, target, io.GetPointer(), img);
  PlainImage back;
  try {
    back = itk_read(file_name, ext);
  } catch (const InputError& e) {
    throw WorkError("cannot write " + target + ": the written file does not read back (" + e.reason() + ")");
  }
  std::vector<size_t> want = img.size;
  if (want.size() == 3 && want[2] == 1) want.pop_back();
  if (back.size != want || back.values.size() != img.values.size() ||
      std::memcmp(back.values.data(), img.values.data(), img.values.size() * sizeof(float)) != 0)
    throw WorkError("cannot write " + target + ": the written file reads back different from what was written");
}

PlainImage itk_read(const std::string& path, const std::string& ext, const HeaderCheck& check) {
  if (ext == ".png") return png_read(path, check);
  quiet_itk();
  auto io = io_for(ext);
  if (!io) throw InputError(path, "", "unsupported extension '" + ext + "'");
  using Img = itk::Image<float, 3>;
  Img::Pointer img;
  unsigned dims = 0;
  // MetaIO trusts the counts of the header (a malformed one overwrites its
  // heap): only headers that pass the strict check reach it.
  if (ext == ".mha") check_metaimage_header(path);
  try {
    if (!io->CanReadFile(path.c_str())) throw InputError(path, "", "is not a readable " + ext + " file");
    io->SetFileName(path);
    if (ext == ".nii" || ext == ".nii.gz") check_nifti_geometry(path, ext == ".nii.gz");
    io->ReadImageInformation();
    dims = io->GetNumberOfDimensions();
    if (dims < 2 || dims > 3)
      throw InputError(path, "", "has " + std::to_string(dims) + " dimensions; expected a 2-D image or a 3-D stack");
    const auto ptype = io->GetPixelType();
    const unsigned comps = io->GetNumberOfComponents();
    const bool colour = (ptype == itk::IOPixelEnum::RGB || ptype == itk::IOPixelEnum::RGBA);
    if (comps != 1 && !colour)
      throw InputError(path, "", "has " + std::to_string(comps) + "-component pixels (" +
                                     itk::ImageIOBase::GetPixelTypeAsString(ptype) + "); expected grey values");
    if (ptype != itk::IOPixelEnum::SCALAR && !colour)
      throw InputError(path, "", "has " + itk::ImageIOBase::GetPixelTypeAsString(ptype) +
                                     " pixels; expected grey values (use .h5 for complex images)");
    std::vector<size_t> size;
    for (unsigned d = 0; d < dims; ++d) size.push_back(io->GetDimensions(d));
    const size_t comp_bytes = io->GetComponentSize();
    if (check) check(size, comps, comp_bytes);
    uint64_t need = comps * static_cast<uint64_t>(comp_bytes);
    for (size_t s : size) need *= s;
    check_data_length(path, ext, need);
    auto reader = itk::ImageFileReader<Img>::New();
    reader->SetImageIO(io);
    reader->SetFileName(path);
    reader->Update();
    img = reader->GetOutput();
  } catch (const itk::ExceptionObject& e) {
    throw InputError(path, "", "cannot read image: " + one_line(e));
  } catch (const std::bad_alloc&) {
    throw InputError(path, "", "cannot read image: its header declares more data than fits in memory");
  }
  const auto size = img->GetLargestPossibleRegion().GetSize();
  const auto spacing = img->GetSpacing();
  PlainImage out;
  const unsigned keep = (dims == 3 && size[2] > 1) ? 3 : 2;
  size_t n = 1;
  for (unsigned d = 0; d < keep; ++d) {
    out.size.push_back(size[d]);
    out.spacing.push_back(spacing[d]);
    n *= size[d];
  }
  const float* buf = img->GetBufferPointer();
  out.values.assign(buf, buf + n);
  return out;
}

}  // namespace recofold::internal
