// SPDX-License-Identifier: Apache-2.0
// `recofold convert IN OUT`: images between recofold HDF5 and NIfTI, MetaImage, NRRD and PNG.
#include <cctype>
#include <memory>
#include <string>

#include "cli_common.h"
#include "output_checks_cli.h"
#include "picture_cli.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/io/image_export.h"
#include "recofold/io/ismrmrd_file.h"
#include "recofold/io/measurement_file.h"

namespace recofold::cli {

namespace {

struct ConvertFlags {
  std::string in, out;
  double window_lo = 0.0, window_hi = 0.0;
  int bits = 8;
  int index = -1;  // -1: keep the whole stack
  std::string dataset;   // --dataset: any array of an HDF5 input
  bool log = false;      // --log: decibels
  double floor_db = -80.0;
  bool montage = false;  // --montage: a stack tiled into one image
};

const std::vector<std::string> kImageExtensions = {".h5", ".nii.gz", ".nii", ".mha", ".nrrd", ".png", ".dcm"};

bool ends_with(const std::string& s, const std::string& tail) {
  return s.size() >= tail.size() && s.compare(s.size() - tail.size(), tail.size(), tail) == 0;
}

// MEAS.h5 -> OUT.ismrmrd.h5: an MRI measurement as ISMRMRD raw data.
void export_raw(const ConvertFlags& f, CLI::App& sub, const Context& ctx) {
  for (const char* flag : {"--window-lo", "--window-hi", "--bits", "--index", "--dataset", "--log", "--montage"})
    if (sub.count(flag) > 0) throw InputError(f.out, flag, "does not apply to an ISMRMRD output");
  if (!file_exists(f.in)) throw InputError(f.in, "IN", "file not found");
  const Measurement m = read_measurement_file(f.in);
  write_ismrmrd_file(f.out, m, f.in);
  say(ctx, "wrote " + f.out + ": ISMRMRD raw data, " + std::to_string(m.mri->kspace.shape[0]) + " coils, " +
               std::to_string(m.ny) + " x " + std::to_string(m.nx));
}

// The input: an image file, or with --dataset any array of an HDF5 file.
ImageRecord read_input(const ConvertFlags& f, CLI::App& sub) {
  if (sub.count("--log-floor") > 0 && !f.log) throw InputError("", "--log-floor", "applies only with --log");
  if (f.log && !(f.floor_db < 0.0 && f.floor_db >= -300.0))
    throw InputError("", "--log-floor", std::to_string(f.floor_db) + "; expected a level in [-300, 0) dB");
  if (f.dataset.empty()) return read_image_any(f.in);
  if (!file_exists(f.in)) throw InputError(f.in, "IN", "file not found");
  if (file_extension(f.in) != ".h5") throw InputError(f.in, "--dataset", "needs an HDF5 (.h5) input");
  return read_dataset_image(f.in, f.dataset.front() == '/' ? f.dataset : "/" + f.dataset);
}

void run_convert(const ConvertFlags& f, CLI::App& sub, const Context& ctx) {
  require_output_path(f.out, "OUT", kImageExtensions);
  require_distinct_output(f.out, "OUT", {f.in});
  std::string lower = f.out;
  for (char& c : lower) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  if (ends_with(lower, ".ismrmrd.h5")) return export_raw(f, sub, ctx);
  const bool lo_given = sub.count("--window-lo") > 0, hi_given = sub.count("--window-hi") > 0;
  if (lo_given != hi_given)
    throw InputError("", lo_given ? "--window-hi" : "--window-lo", "give --window-lo and --window-hi together");
  const std::string out_ext = file_extension(f.out);
  if ((lo_given || sub.count("--bits") > 0) && out_ext != ".png")
    throw InputError(f.out, lo_given ? "--window-lo" : "--bits", "PNG flags need a .png output");
  PngWindow w;
  w.bits = f.bits;
  if (lo_given) {
    w.auto_window = false;
    w.lo = f.window_lo;
    w.hi = f.window_hi;
    const auto errors = w.validate();
    if (!errors.empty()) throw InputError("", "--window-hi", errors.front());
  }

  ImageRecord rec = read_input(f, sub);
  if (f.index >= 0) {
    ImageRecord one = rec;
    ImageF img;
    try {
      img = image_slice(rec, f.index, f.in);
    } catch (const InputError& e) {
      throw_with_flags(e, {{"index", "--index"}});
    }
    const bool keep_complex = rec.is_complex && out_ext == ".h5";
    const Shape& s = rec.pixels.shape;
    const Index ny = s[s.rank() - 2], nx = s[s.rank() - 1];
    one.pixels = NdArray<cfloat>(Shape{ny, nx});
    const size_t off = s.rank() == 3 ? static_cast<size_t>(f.index * ny * nx) : 0;
    for (size_t i = 0; i < one.pixels.data.size(); ++i)
      one.pixels.data[i] = keep_complex ? rec.pixels.data[off + i] : cfloat(img.data()[i], 0.f);
    one.is_complex = keep_complex;
    rec = std::move(one);
  }
  if (f.log) to_decibels(rec, f.floor_db);
  if (f.montage) {
    if (rec.pixels.shape.rank() != 3)
      throw InputError(f.in, "--montage", "needs a stack [count, ny, nx]; the input is " + rec.pixels.shape.to_string() +
                                             (f.index >= 0 ? " after --index" : ""));
    rec = montage(rec);
  }
  Provenance prov = make_provenance(ctx);
  prov.extra["source"] = f.in;
  prov.extra["source_checksum_fnv1a64"] = file_checksum(f.in);
  write_image_any(f.out, rec, prov, w);
  std::string note;
  if (rec.is_complex && out_ext != ".h5") note = " (complex values written as magnitude)";
  say(ctx, "wrote " + f.out + ": " + rec.pixels.shape.to_string() + note);
}

}  // namespace

void register_cmd_convert(CLI::App& app, Context& ctx) {
  auto flags = std::make_shared<ConvertFlags>();
  CLI::App* sub = app.add_subcommand(
      "convert", "Convert images between recofold HDF5 (.h5) and .nii.gz/.nii, .mha, .nrrd, .png, DICOM; "
                 "MRI measurements to ISMRMRD raw data");
  sub->add_option("IN", flags->in,
                  "Input image (.h5, .nii.gz, .nii, .mha, .nrrd, .png, a DICOM file or a folder holding one DICOM "
                  "series), or a measurement file for an .ismrmrd.h5 output")
      ->required();
  sub->add_option("OUT", flags->out, "Output image; the format follows the extension")->required();
  sub->add_option("--window-lo", flags->window_lo, "PNG: value shown black (with --window-hi; default: image min)");
  sub->add_option("--window-hi", flags->window_hi, "PNG: value shown white (with --window-lo; default: image max)");
  sub->add_option("--bits", flags->bits, "PNG: bits per pixel, 8 or 16 (default 8)")->check(CLI::IsMember({8, 16}));
  sub->add_option("--index", flags->index, "Convert only image I of a stack [count, ny, nx]")
      ->check(CLI::NonNegativeNumber);
  sub->add_option("--dataset", flags->dataset,
                  "Any array of an HDF5 input instead of /image, e.g. /mri/kspace, /mri/coil_maps, /mri/mask, "
                  "/ct/sinogram, /truth/image (see `recofold info IN`)");
  sub->add_flag("--log", flags->log, "Show magnitudes in dB of the largest, 20 log10(|v|/max) (for k-space)");
  sub->add_option("--log-floor", flags->floor_db, "With --log: the lowest level shown, dB (default -80)");
  sub->add_flag("--montage", flags->montage, "Tile a stack [count, ny, nx] (coils, objects) into one image");
  sub->footer("Complex images keep their values only in .h5; other formats get the magnitude.\n"
              "Pictures of measurements: convert meas.h5 k.png --dataset /mri/kspace --log --montage (one tile per "
              "coil); --dataset /ct/sinogram (views down, detectors across).\n"
              "DICOM in: rescale slope and intercept applied, pixel spacing kept; DICOM out (.dcm): one 2-D image, int16 "
              "with rescale slope/intercept.\n"
              "An MRI measurement file converts to ISMRMRD raw data when OUT ends in .ismrmrd.h5 (line masks only).\n" +
              std::string(kResearchUseLine));
  sub->callback([flags, sub, &ctx] { run_convert(*flags, *sub, ctx); });
}

}  // namespace recofold::cli
