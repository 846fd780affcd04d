// SPDX-License-Identifier: Apache-2.0
// `recofold import RAW.h5 --out MEAS.h5`: raw multi-coil k-space (ISMRMRD) to a measurement file.
#include <memory>
#include <sstream>
#include <string>

#include "cli_common.h"
#include "output_checks_cli.h"
#include "recofold/acquire/raw_import.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/number_format.h"
#include "recofold/core/error.h"
#include "recofold/io/h5_file.h"
#include "recofold/io/image_file.h"
#include "recofold/io/ismrmrd_file.h"
#include "recofold/io/measurement_file.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/ops/espirit.h"
#include "recofold/ops/fft.h"

namespace recofold::cli {

namespace {

struct ImportFlags {
  std::string raw, out, average = "mean", maps = "espirit", maps_file, group = "dataset";
  int slice = 0, contrast = 0, repetition = 0;
  bool no_prewhiten = false;
  EspiritOptions espirit;
};

// Coil maps [C, ny, nx] from a measurement file (/mri/coil_maps) or an image
// file holding a complex stack [C, ny, nx].
NdArray<cfloat> maps_from_file(const std::string& path, const Shape& want) {
  if (!file_exists(path)) throw InputError(path, "--maps-file", "file not found");
  NdArray<cfloat> maps;
  bool is_measurement = false;
  {
    H5Reader r(path);
    is_measurement = r.has("/mri/coil_maps");
  }
  if (is_measurement) {
    maps = read_measurement_file(path).mri->coil_maps;
  } else {
    const ImageRecord rec = read_image_file(path);
    maps = rec.pixels;
  }
  if (maps.shape != want)
    throw InputError(path, "--maps-file",
                     "coil maps of shape " + maps.shape.to_string() + "; the raw data need " + want.to_string());
  return maps;
}

void run_import(ImportFlags& f, const Context& ctx) {
  // Every check before any work: bad input leaves no output.
  require_output_path(f.out, "--out", {".h5"});
  require_distinct_output(f.out, "--out", {f.raw, f.maps_file});
  IsmrmrdSelection sel;
  sel.slice = f.slice;
  sel.contrast = f.contrast;
  sel.repetition = f.repetition;
  sel.group = f.group;
  if (f.average == "mean") {
    sel.average = -1;
  } else {
    try {
      size_t used = 0;
      sel.average = std::stoi(f.average, &used);
      if (used != f.average.size() || sel.average < 0) throw std::invalid_argument(f.average);
    } catch (const std::exception&) {
      throw InputError("", "--average", "'" + f.average + "'; expected a non-negative average index or 'mean'");
    }
  }
  if (f.maps != "espirit" && f.maps != "lowres" && f.maps != "file")
    throw InputError("", "--maps", "'" + f.maps + "'; expected espirit, lowres or file");
  if ((f.maps == "file") != !f.maps_file.empty())
    throw InputError("", f.maps == "file" ? "--maps" : "--maps-file",
                     "--maps file and --maps-file FILE go together");
  {
    const auto errors = f.espirit.validate();
    if (!errors.empty()) {
      const std::string& e = errors.front();
      std::string flag = "--espirit-kernel";
      if (e.rfind("espirit.calibration_size", 0) == 0) flag = "--espirit-calibration";
      if (e.rfind("espirit.singular_threshold", 0) == 0) flag = "--espirit-threshold";
      if (e.rfind("espirit.crop_threshold", 0) == 0) flag = "--espirit-crop";
      throw InputError("", flag, e);
    }
  }
  if (!file_exists(f.raw)) throw InputError(f.raw, "RAW", "file not found");
  apply_threads(ctx);
  set_fft_measure(false);  // one-off transforms: reproducible bytes

  RawCartesian raw;
  try {
    raw = read_ismrmrd_file(f.raw, sel);
  } catch (const InputError& e) {
    // The library names selection fields; the command line names flags.
    for (const char* name : {"slice", "contrast", "repetition", "average", "group"})
      if (e.field() == name) throw InputError(e.file(), std::string("--") + name, e.reason());
    throw;
  }
  RawImportOptions opt;
  opt.prewhiten = !f.no_prewhiten;
  Measurement m = measurement_from_raw(raw, opt, f.raw);
  MriData& mri = *m.mri;
  std::string maps_text;
  if (f.maps == "espirit") {
    const EspiritResult e = espirit_maps(mri.kspace, mri.mask, f.espirit, f.raw);
    mri.coil_maps = e.maps;
    mri.coil_maps_source = "espirit";
    mri.texts["coil_maps_method"] = e.summary;
    maps_text = e.summary;
  } else if (f.maps == "lowres") {
    mri.coil_maps = estimate_coil_maps(mri.kspace, mri.mask, 0.05, f.raw);
    mri.coil_maps_source = "estimated";
    mri.texts["coil_maps_method"] = "low-resolution estimate (Hann-windowed calibration region / sum of squares)";
    maps_text = "low-resolution estimate";
  } else {
    mri.coil_maps = maps_from_file(f.maps_file, mri.kspace.shape);
    mri.coil_maps_source = "file";
    mri.texts["coil_maps_method"] = "read from " + f.maps_file;
    maps_text = "from " + f.maps_file;
  }

  Provenance prov = make_provenance(ctx);
  prov.extra = m.provenance.extra;
  prov.extra["source"] = f.raw;
  prov.extra["source_checksum_fnv1a64"] = file_checksum(f.raw);
  prov.extra["source_format"] = "ISMRMRD";
  prov.extra["selection"] = "slice " + std::to_string(sel.slice) + ", contrast " + std::to_string(sel.contrast) +
                            ", repetition " + std::to_string(sel.repetition) + ", average " +
                            (sel.average < 0 ? "mean of " + std::to_string(raw.averages_used) : std::to_string(sel.average));
  prov.extra["raw.xml_header"] = raw.xml;
  m.provenance = prov;
  write_measurement_file(f.out, m);

  const Index coils = mri.kspace.shape[0];
  std::string over;
  if (raw.readout_keep < raw.ex) over = " (readout oversampling " + format_sig(static_cast<double>(raw.ex) / raw.readout_keep, 4) + " removed)";
  std::string skipped;
  for (const auto& [kind, count] : raw.skipped) skipped += (skipped.empty() ? "" : ", ") + kind + " " + std::to_string(count);
  say(ctx, "wrote " + f.out + ": " + std::to_string(coils) + " coils, " + std::to_string(m.ny) + " x " +
               std::to_string(m.nx) + over + ", " + std::to_string(raw.selected_lines) + " lines of " +
               std::to_string(raw.acquisitions) + " acquisitions, R = " + format_sig(mri.acceleration, 3));
  say(ctx, "  noise sigma " + format_sig(mri.noise_sigma, 4) + ": " + mri.texts["noise_sigma_source"]);
  say(ctx, "  coil maps: " + maps_text);
  if (!skipped.empty()) say(ctx, "  skipped: " + skipped);
}

}  // namespace

void register_cmd_import(CLI::App& app, Context& ctx) {
  auto f = std::make_shared<ImportFlags>();
  CLI::App* sub = app.add_subcommand(
      "import", "Import raw multi-coil Cartesian k-space (ISMRMRD .h5) as a measurement file");
  sub->add_option("RAW", f->raw, "Raw data file in the ISMRMRD format (HDF5)")->required();
  sub->add_option("--out", f->out, "Measurement file to write (.h5)")->required();
  sub->add_option("--slice", f->slice, "Slice to import (encoding counter, default 0)")->check(CLI::NonNegativeNumber);
  sub->add_option("--contrast", f->contrast, "Contrast (echo) to import (default 0)")->check(CLI::NonNegativeNumber);
  sub->add_option("--repetition", f->repetition, "Repetition to import (default 0)")->check(CLI::NonNegativeNumber);
  sub->add_option("--average", f->average, "Average to import, or 'mean' of all averages (default mean)");
  sub->add_option("--maps", f->maps,
                  "Coil maps: espirit (default; from the fully sampled centre), lowres (windowed centre / sum of "
                  "squares) or file (with --maps-file)");
  sub->add_option("--maps-file", f->maps_file,
                  "Coil maps [coils, ny, nx]: a measurement file (/mri/coil_maps) or a complex image stack (.h5)");
  sub->add_flag("--no-prewhiten", f->no_prewhiten,
                "Keep the channels as stored even when the file has noise-adjust scans");
  sub->add_option("--espirit-kernel", f->espirit.kernel_size, "ESPIRiT kernel size per axis (default 6)");
  sub->add_option("--espirit-calibration", f->espirit.calibration_size,
                  "ESPIRiT: largest calibration block per axis (default 24)");
  sub->add_option("--espirit-threshold", f->espirit.singular_threshold,
                  "ESPIRiT: keep singular vectors above this fraction of the largest (default 0.02)");
  sub->add_option("--espirit-crop", f->espirit.crop_threshold,
                  "ESPIRiT: zero the maps where the eigenvalue is below this (default 0.9)");
  sub->add_option("--group", f->group, "HDF5 group of the dataset (default 'dataset')");
  sub->footer(
      "Reads the XML header and the acquisitions; skips noise-adjust (used for pre-whitening), navigator and "
      "other non-imaging lines; removes readout oversampling; places lines by their encoding counters into "
      "/mri/kspace [coils, ny, nx] with the sampled-lines mask; records the source in /provenance. Cartesian 2-D "
      "data only: non-Cartesian, EPI and 3-D raw data are refused (exit 2) with the reason.\n" +
      std::string(kResearchUseLine));
  sub->callback([f, &ctx] { run_import(*f, ctx); });
}

}  // namespace recofold::cli
