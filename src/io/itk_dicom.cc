// SPDX-License-Identifier: Apache-2.0
// DICOM files and series folders through ITK's GDCM image IO (declared in itk_bridge.h).
// Like itk_bridge.cc it includes ITK and nothing that includes Eigen.
#include <gdcmReader.h>
#include <gdcmTag.h>
#include <gdcmTrace.h>
#include <itkGDCMImageIO.h>
#include <itkGDCMSeriesFileNames.h>
#include <itkImage.h>
#include <itkImageFileReader.h>
#include <itkImageFileWriter.h>
#include <itkImageSeriesReader.h>
#include <itkMetaDataObject.h>
#include <sys/stat.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <fstream>

#include "itk_bridge.h"
#include "recofold/core/error.h"

namespace recofold::internal {

namespace {

std::string one_line(const std::string& text) {
  std::string s = text;
  std::replace(s.begin(), s.end(), '\n', ' ');
  while (!s.empty() && s.back() == ' ') s.pop_back();
  return s;
}

// GDCM prints warnings to stderr by default; library code must not print.
void quiet_gdcm() {
  static const bool done = [] {
    gdcm::Trace::WarningOff();
    gdcm::Trace::DebugOff();
    itk::Object::GlobalWarningDisplayOff();
    return true;
  }();
  (void)done;
}

bool is_folder(const std::string& path) {
  struct stat st;
  return ::stat(path.c_str(), &st) == 0 && S_ISDIR(st.st_mode);
}

std::string lower(std::string s) {
  for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

// Refuses a DICOM object without pixel data, before ITK allocates anything.
void require_pixel_data(const std::string& file, const std::string& named) {
  gdcm::Reader r;
  r.SetFileName(file.c_str());
  if (!r.Read()) throw InputError(named, "", "is not a readable DICOM file");
  if (!r.GetFile().GetDataSet().FindDataElement(gdcm::Tag(0x7fe0, 0x0010)))
    throw InputError(named, "(7FE0,0010)", "has no pixel data: a DICOM object without an image");
}

std::string fmt_ds(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.8g", v);
  return buf;
}

}  // namespace

bool looks_like_dicom(const std::string& path) {
  if (is_folder(path)) return true;
  const std::string l = lower(path);
  for (const char* ext : {".dcm", ".dicom", ".ima"}) {
    const std::string e(ext);
    if (l.size() > e.size() && l.compare(l.size() - e.size(), e.size(), e) == 0) return true;
  }
  std::ifstream in(path, std::ios::binary);
  char magic[4] = {0, 0, 0, 0};
  if (!in.seekg(128) || !in.read(magic, 4)) return false;
  return std::string(magic, 4) == "DICM";
}

PlainImage itk_read_dicom(const std::string& path, DicomInfo& info, const HeaderCheck& check) {
  quiet_gdcm();
  using Img = itk::Image<float, 3>;
  auto io = itk::GDCMImageIO::New();
  std::vector<std::string> files;
  const bool folder = is_folder(path);
  if (folder) {
    auto names = itk::GDCMSeriesFileNames::New();
    names->SetUseSeriesDetails(true);
    try {
      names->SetDirectory(path);
      const auto& uids = names->GetSeriesUIDs();
      if (uids.empty()) throw InputError(path, "", "folder holds no DICOM series");
      if (uids.size() > 1)
        throw InputError(path, "", "folder holds " + std::to_string(uids.size()) +
                                       " DICOM series; put one series in a folder of its own");
      files = names->GetFileNames(uids.front());
    } catch (const itk::ExceptionObject& e) {
      throw InputError(path, "", "cannot list the DICOM series: " + one_line(e.GetDescription()));
    }
    if (files.empty()) throw InputError(path, "", "folder holds no DICOM series");
  } else {
    struct stat st;
    if (::stat(path.c_str(), &st) != 0) throw InputError(path, "", "file not found");
    files.push_back(path);
  }
  require_pixel_data(files.front(), folder ? files.front() : path);
  Img::Pointer img;
  try {
    if (!io->CanReadFile(files.front().c_str())) throw InputError(files.front(), "", "is not a readable DICOM file");
    io->SetFileName(files.front());
    io->ReadImageInformation();
    const unsigned comps = io->GetNumberOfComponents();
    if (comps != 1)
      throw InputError(files.front(), "", "has " + std::to_string(comps) + "-component pixels; expected grey values");
    std::vector<size_t> size;
    for (unsigned d = 0; d < io->GetNumberOfDimensions(); ++d) size.push_back(io->GetDimensions(d));
    if (size.size() == 2 && files.size() > 1) size.push_back(files.size());
    if (check) check(size, comps, io->GetComponentSize());
    if (files.size() == 1) {
      auto reader = itk::ImageFileReader<Img>::New();
      reader->SetImageIO(io);
      reader->SetFileName(files.front());
      reader->Update();
      img = reader->GetOutput();
    } else {
      auto reader = itk::ImageSeriesReader<Img>::New();
      reader->SetImageIO(io);
      reader->SetFileNames(files);
      reader->Update();
      img = reader->GetOutput();
    }
  } catch (const itk::ExceptionObject& e) {
    throw InputError(path, "", "cannot read DICOM: " + one_line(e.GetDescription()));
  }
  info.rescale_slope = io->GetRescaleSlope();
  info.rescale_intercept = io->GetRescaleIntercept();
  info.files = files.size();
  std::string modality;
  if (io->GetValueFromTag("0008|0060", modality)) {
    while (!modality.empty() && (modality.back() == ' ' || modality.back() == '\0')) modality.pop_back();
    info.modality = modality;
  }
  const auto size = img->GetLargestPossibleRegion().GetSize();
  const auto spacing = img->GetSpacing();
  PlainImage out;
  const unsigned keep = size[2] > 1 ? 3 : 2;
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

void itk_write_dicom(const std::string& file_name, const std::string& target, const PlainImage& p,
                     const std::string& comment) {
  quiet_gdcm();
  if (p.size.size() != 2) throw WorkError("cannot write " + target + ": DICOM export takes one 2-D image");
  using Img = itk::Image<float, 2>;
  double lo = 0, hi = 0;
  if (!p.values.empty()) {
    const auto mm = std::minmax_element(p.values.begin(), p.values.end());
    lo = *mm.first;
    hi = *mm.second;
  }
  // GDCM stores v as round((v - intercept) / slope) in int16: the slope and
  // intercept below span [-32767, 32767]. (GDCM's integer writer wants an
  // integral intercept, so the float image goes in and GDCM applies the
  // inverse rescale itself.)
  const double intercept = std::round(0.5 * (lo + hi));
  const double half = std::max(hi - intercept, intercept - lo);
  const double slope = half > 0 ? half / 32767.0 : 1.0;
  auto img = Img::New();
  Img::RegionType region;
  Img::SizeType size;
  Img::SpacingType spacing;
  for (unsigned d = 0; d < 2; ++d) {
    size[d] = static_cast<itk::SizeValueType>(p.size[d]);
    spacing[d] = p.spacing[d];
  }
  region.SetSize(size);
  img->SetRegions(region);
  img->SetSpacing(spacing);
  img->Allocate();
  std::copy(p.values.begin(), p.values.end(), img->GetBufferPointer());
  auto io = itk::GDCMImageIO::New();
  io->SetInternalComponentType(itk::IOComponentEnum::SHORT);
  itk::MetaDataDictionary& dict = img->GetMetaDataDictionary();
  itk::EncapsulateMetaData<std::string>(dict, "0028|1052", fmt_ds(intercept));
  itk::EncapsulateMetaData<std::string>(dict, "0028|1053", fmt_ds(slope));
  itk::EncapsulateMetaData<std::string>(dict, "0008|0060", "OT");
  itk::EncapsulateMetaData<std::string>(dict, "0028|0004", "MONOCHROME2");
  // Stored pixels: signed 16-bit (bits allocated, stored, high bit, representation).
  itk::EncapsulateMetaData<std::string>(dict, "0028|0100", "16");
  itk::EncapsulateMetaData<std::string>(dict, "0028|0101", "16");
  itk::EncapsulateMetaData<std::string>(dict, "0028|0102", "15");
  itk::EncapsulateMetaData<std::string>(dict, "0028|0103", "1");
  itk::EncapsulateMetaData<std::string>(dict, "0020|4000", comment);
  auto writer = itk::ImageFileWriter<Img>::New();
  writer->SetImageIO(io);
  writer->SetFileName(file_name);
  writer->SetInput(img);
  try {
    writer->Update();
  } catch (const itk::ExceptionObject& e) {
    throw WorkError("cannot write " + target + ": " + one_line(e.GetDescription()));
  }
}

}  // namespace recofold::internal
