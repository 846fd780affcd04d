// SPDX-License-Identifier: Apache-2.0
// The only translation unit that includes ITK: NIfTI, MetaImage, NRRD and PNG readers/writers.
#include "itk_bridge.h"

#include <itkImage.h>
#include <itkImageFileReader.h>
#include <itkImageFileWriter.h>
#include <itkMetaDataObject.h>
#include <itkMetaImageIO.h>
#include <itkNiftiImageIO.h>
#include <itkNrrdImageIO.h>
#include <itkPNGImageIO.h>

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
  if (ext == ".png") return itk::PNGImageIO::New().GetPointer();
  return nullptr;
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
    throw WorkError("cannot write " + target + ": " + e.GetDescription());
  }
}

template <typename Pixel>
void write_png_typed(const std::string& file_name, const std::string& target, size_t nx, size_t ny,
                     const std::vector<uint16_t>& levels) {
  using Img = itk::Image<Pixel, 2>;
  auto out = Img::New();
  typename Img::RegionType region;
  typename Img::SizeType size;
  size[0] = static_cast<itk::SizeValueType>(nx);
  size[1] = static_cast<itk::SizeValueType>(ny);
  region.SetSize(size);
  out->SetRegions(region);
  out->Allocate();
  Pixel* buf = out->GetBufferPointer();
  for (size_t i = 0; i < levels.size(); ++i) buf[i] = static_cast<Pixel>(levels[i]);
  auto writer = itk::ImageFileWriter<Img>::New();
  writer->SetImageIO(itk::PNGImageIO::New());
  writer->SetFileName(file_name);
  writer->SetInput(out);
  try {
    writer->Update();
  } catch (const itk::ExceptionObject& e) {
    throw WorkError("cannot write " + target + ": " + e.GetDescription());
  }
}

}  // namespace

bool itk_handles(const std::string& ext) { return io_for(ext) != nullptr; }

void itk_write_float(const std::string& file_name, const std::string& target, const std::string& ext,
                     const PlainImage& img) {
  quiet_itk();
  auto io = io_for(ext);
  if (!io || ext == ".png") throw WorkError("cannot write " + target + ": no float writer for '" + ext + "'");
  if (img.size.size() == 2)
    write_float_dim<2>(file_name, target, io.GetPointer(), img);
  else if (img.size.size() == 3)
    write_float_dim<3>(file_name, target, io.GetPointer(), img);
  else
    throw WorkError("cannot write " + target + ": only 2-D and 3-D images are supported");
}

void itk_write_png(const std::string& file_name, const std::string& target, size_t nx, size_t ny,
                   const std::vector<uint16_t>& levels, int bits) {
  quiet_itk();
  if (bits == 16)
    write_png_typed<uint16_t>(file_name, target, nx, ny, levels);
  else
    write_png_typed<uint8_t>(file_name, target, nx, ny, levels);
}

PlainImage itk_read(const std::string& path, const std::string& ext) {
  quiet_itk();
  auto io = io_for(ext);
  if (!io) throw InputError(path, "", "unsupported extension '" + ext + "'");
  using Img = itk::Image<float, 3>;
  Img::Pointer img;
  unsigned dims = 0;
  try {
    if (!io->CanReadFile(path.c_str())) throw InputError(path, "", "is not a readable " + ext + " file");
    io->SetFileName(path);
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
    auto reader = itk::ImageFileReader<Img>::New();
    reader->SetImageIO(io);
    reader->SetFileName(path);
    reader->Update();
    img = reader->GetOutput();
  } catch (const itk::ExceptionObject& e) {
    throw InputError(path, "", std::string("cannot read image: ") + e.GetDescription());
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
