// SPDX-License-Identifier: Apache-2.0
// `recofold score`: PSNR, SSIM, NRMSE and HFEN of an image against a reference.
#include <cmath>
#include <cstdio>
#include <memory>
#include <string>

#include "cli_common.h"
#include "learn_cli.h"
#include "recofold/recon/learned_backend.h"
#include "recofold/core/error.h"
#include "recofold/core/json.h"
#include "recofold/core/number_format.h"
#include "recofold/core/provenance.h"
#include "recofold/core/atomic_file.h"
#include "recofold/io/h5_file.h"
#include "recofold/io/image_export.h"
#include "recofold/io/measurement_file.h"
#include "recofold/metrics/image_quality.h"

namespace recofold::cli {

namespace {

struct ScoreFlags {
  std::string reference, image, roi, model;
  bool json = false;
  double data_range = 0.0;
  int index = 0;
};

// One slice of an image file: --index picks an image of a stack; a 2-D file holds image 0 only.
// A measurement file (HDF5 without /image but with /truth/image) gives its ground truth.
ImageF load_slice(const std::string& path, int index) {
  if (file_extension(path) == ".h5") {
    bool truth_only = false;
    {
      const H5Reader r(path);
      truth_only = !r.has("/image") && r.has("/truth/image");
    }
    if (truth_only) {
      const Measurement m = read_measurement_file(path);
      ImageRecord rec;
      rec.pixels = *m.truth;
      rec.is_complex = m.truth_is_complex;
      return image_slice(rec, index, path);
    }
  }
  const ImageRecord rec = read_image_any(path);
  return image_slice(rec, index, path);
}

// Library field "index" (image_slice) reported as the flag.
ImageF load(const std::string& path, int index) {
  try {
    return load_slice(path, index);
  } catch (const InputError& e) {
    throw_with_flags(e, {{"index", "--index"}});
  }
}

void require_same_shape(const ImageF& a, const ImageF& b, const std::string& file, const std::string& ref_file) {
  if (a.rows() != b.rows() || a.cols() != b.cols())
    throw InputError(file, "", "image is [" + std::to_string(a.rows()) + ", " + std::to_string(a.cols()) +
                                   "] but the reference " + ref_file + " is [" + std::to_string(b.rows()) + ", " +
                                   std::to_string(b.cols()) + "]");
}

// -log2 p(image) per pixel under the flow model of `f.model` (through the learned backend).
double plausibility(const ScoreFlags& f, const ImageF& img) {
  install_learned_backend();
  const LearnedBackendLookup found = find_learned_backend();
  if (!found.backend) throw InputError("", "--model", found.reason);
  try {
    return found.backend->bits_per_dim(f.model, img, f.image);
  } catch (const InputError& e) {
    // The backend names the model's fields (/model@kind) or the image's fit ("image size").
    throw InputError(e.file(), e.file() == f.model && e.field().rfind("/", 0) != 0 ? "--model" : e.field(),
                     e.reason());
  }
}

void run_score(const ScoreFlags& f, const CLI::App& sub, const Context& ctx) {
  if (sub.count("--data-range") > 0 && !(std::isfinite(f.data_range) && f.data_range > 0))
    throw InputError("", "--data-range", "got " + format_sig(f.data_range, 6) +
                                             ", expected a positive number (omit it for max - min of the reference)");
  if (f.reference.empty() && f.model.empty())
    throw InputError("", "--reference", "give a reference image to score against (or --model for a plausibility "
                                        "score only)");
  if (f.reference.empty() && !f.roi.empty())
    throw InputError("", "--roi", "a region needs --reference (plausibility is scored on the whole image)");
  const ImageF img = load(f.image, f.index);
  const bool have_model = !f.model.empty();
  const double bits = have_model ? plausibility(f, img) : 0.0;
  if (f.reference.empty()) {
    if (f.json) {
      JsonObjectWriter w;
      w.add("bits_per_dim", bits);
      w.add("model", f.model);
      w.add("image", f.image);
      say(ctx, w.str());
    } else {
      say(ctx, "bits_per_dim  " + format_sig(bits, 6) + " (-log2 p per pixel under " + f.model + ")\n" +
                   kResearchUseLine);
    }
    return;
  }
  const ImageF ref = load(f.reference, f.index);
  require_same_shape(img, ref, f.image, f.reference);
  ScoreOptions opt;
  opt.data_range = f.data_range;
  if (!f.roi.empty()) {
    opt.region = load(f.roi, f.index);
    require_same_shape(opt.region, ref, f.roi, f.reference);
  }
  Scores s;
  try {
    s = score_images(ref, img, opt);
  } catch (const InputError& e) {
    // The metrics name the role (reference/image/region); add the file.
    const std::string file = e.field() == "reference" ? f.reference : e.field() == "region" ? f.roi : f.image;
    throw InputError(file, e.field() == "region" ? "--roi" : "", e.reason());
  }
  if (f.json) {
    // An infinite PSNR (identical images) prints as null.
    JsonObjectWriter w;
    w.add("psnr", s.psnr);
    w.add("ssim", s.ssim);
    w.add("nrmse", s.nrmse);
    w.add("hfen", s.hfen);
    w.add("data_range", s.data_range);
    if (have_model) {
      w.add("bits_per_dim", bits);
      w.add("model", f.model);
    }
    w.add("reference", f.reference);
    w.add("image", f.image);
    say(ctx, w.str());
    return;
  }
  char buf[256];
  std::snprintf(buf, sizeof buf, "psnr   %.4f dB (data range %.6g)\nssim   %.6f\nnrmse  %.6f\nhfen   %.6f",
                s.psnr, s.data_range, s.ssim, s.nrmse, s.hfen);
  say(ctx, buf);
  if (have_model) say(ctx, "bits_per_dim  " + format_sig(bits, 6) + " (-log2 p per pixel under " + f.model + ")");
  say(ctx, kResearchUseLine);
}

}  // namespace

void register_cmd_score(CLI::App& app, Context& ctx) {
  auto flags = std::make_shared<ScoreFlags>();
  CLI::App* sub = app.add_subcommand("score", "Score an image against a reference: PSNR, SSIM, NRMSE, HFEN");
  sub->add_option("--reference", flags->reference,
                  "Reference image (.h5, .nii.gz, .nii, .mha, .nrrd, .png), or a measurement file with "
                  "/truth/image (its ground truth is used); required unless --model is given");
  sub->add_option("--image", flags->image, "Image to score, same shape as the reference")->required();
  sub->add_flag("--json", flags->json,
                "Print one JSON object with keys psnr, ssim, nrmse, hfen (and data_range, reference, image; "
                "bits_per_dim and model with --model); "
                "an infinite PSNR (identical images) prints as null");
  sub->add_option("--model", flags->model,
                  "Flow model file (recofold train, [model] kind = \"flow\"): add bits_per_dim, -log2 p(image) per "
                  "pixel, a plausibility score (high: unlike the flow's training images); the image must have the "
                  "flow's size and is scored as real (magnitude of a complex image)");
  sub->add_option("--roi", flags->roi, "Region mask image of the same shape; nonzero pixels are scored");
  sub->add_option("--data-range", flags->data_range,
                  "Data range L for PSNR and SSIM (default: max - min of the reference)");
  sub->add_option("--index", flags->index, "Image I of inputs that hold a stack (default 0)")
      ->check(CLI::NonNegativeNumber);
  sub->footer("Complex images are scored by magnitude. Definitions and sources: DEVELOPERS.md, section Sources.\n" + std::string(kResearchUseLine));
  sub->callback([flags, sub, &ctx] { run_score(*flags, *sub, ctx); });
}

}  // namespace recofold::cli
