// SPDX-License-Identifier: Apache-2.0
// `recofold phantom`: raster a phantom table or a seeded random family into an image file.
#include <cstdint>
#include <memory>
#include <sstream>
#include <string>

#include "cli_common.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/io/image_export.h"
#include "recofold/phantom/family.h"
#include "recofold/phantom/phantom_table.h"
#include "recofold/phantom/raster.h"

namespace recofold::cli {

namespace {

constexpr int kMaxSize = 16384;
constexpr double kMaxElements = 1u << 30;  // pixels in one output (8 GiB as complex64)

struct PhantomFlags {
  std::string table;
  std::string family;
  int count = 1;
  uint64_t seed = 0;
  std::string size;  // N or NYxNX
  int size_x = 0;  // 0: same as --size
  std::string out;
  std::string png;
  double fov_mm = 0.0;  // 0: from the table / family default
  int edge_supersample = RasterOptions{}.edge_supersample;
  // family controls (defaults from family_options())
  int components = FamilyOptions{}.components;
  double intensity_min = FamilyOptions{}.intensity_min;
  double intensity_max = FamilyOptions{}.intensity_max;
  double size_min = FamilyOptions{}.size_min;
  double size_max = FamilyOptions{}.size_max;
  std::string texture;  // "", "on", "off"
  int texture_blobs = FamilyOptions{}.texture_blobs;
  double texture_contrast = FamilyOptions{}.texture_contrast;
  std::string contrast = "mri";  // anatomy: mri | ct
};

const std::vector<std::string> kImageExtensions = {".h5", ".nii.gz", ".nii", ".mha", ".nrrd", ".png"};

std::string format_number(double v) {
  std::ostringstream s;
  s << v;
  return s.str();
}

void check_size(Index value, const std::string& flag) {
  if (value < 1 || value > kMaxSize)
    throw InputError("", flag, "= " + std::to_string(value) + "; must be in 1.." + std::to_string(kMaxSize));
}

// The flag behind a FamilyOptions::validate() message ("family.size_max = ...").
std::string family_flag(const std::string& message) {
  const std::pair<const char*, const char*> map[] = {
      {"family.components", "--components"},       {"family.intensity", "--intensity-min"},
      {"family.size", "--size-min"},               {"family.texture_blobs", "--texture-blobs"},
      {"family.texture_contrast", "--texture-contrast"}, {"family.fov_mm", "--fov"}};
  for (const auto& [prefix, flag] : map)
    if (message.rfind(prefix, 0) == 0) return flag;
  return "--family";
}

FamilyOptions family_from_flags(const PhantomFlags& f, const CLI::App& sub) {
  const std::optional<Family> fam = parse_family(f.family);
  if (!fam) throw InputError("", "--family", "unknown family '" + f.family + "' (known: " + family_names() + ")");
  const std::optional<TissueContrast> contrast = parse_tissue_contrast(f.contrast);
  if (!contrast) throw InputError("", "--contrast", "'" + f.contrast + "'; expected mri or ct");
  if (sub.count("--contrast") > 0 && *fam != Family::kAnatomy)
    throw InputError("", "--contrast", "only applies to the anatomy family");
  FamilyOptions o = family_options(*fam, *contrast);
  // Only flags given on the command line replace the family's defaults.
  if (sub.count("--components") > 0) o.components = f.components;
  if (sub.count("--intensity-min") > 0) o.intensity_min = f.intensity_min;
  if (sub.count("--intensity-max") > 0) o.intensity_max = f.intensity_max;
  if (sub.count("--size-min") > 0) o.size_min = f.size_min;
  if (sub.count("--size-max") > 0) o.size_max = f.size_max;
  if (sub.count("--texture-blobs") > 0) o.texture_blobs = f.texture_blobs;
  if (sub.count("--texture-contrast") > 0) o.texture_contrast = f.texture_contrast;
  if (sub.count("--texture") > 0) o.texture = f.texture == "on";
  if (sub.count("--fov") > 0) o.fov_mm = f.fov_mm;
  const std::vector<std::string> errors = o.validate();
  if (!errors.empty()) {
    std::string all;
    for (const std::string& e : errors) all += (all.empty() ? "" : "; ") + e;
    throw InputError("", family_flag(errors.front()), all);
  }
  return o;
}

void run_phantom(const PhantomFlags& f, const CLI::App& sub, const Context& ctx) {
  // Every flag is checked before any work, so bad input leaves no output.
  const bool use_table = !f.table.empty(), use_family = !f.family.empty();
  if (use_table == use_family) throw InputError("", "--table", "give exactly one of --table FILE or --family NAME");
  const auto [rows, columns] = parse_grid_size(f.size);
  if (sub.count("--size-x") > 0 && f.size.find('x') != std::string::npos)
    throw InputError("", "--size-x", "give the columns once: --size NYxNX or --size N --size-x NX");
  check_size(rows, "--size");
  check_size(columns, "--size");
  const int ny = static_cast<int>(rows), nx = sub.count("--size-x") > 0 ? f.size_x : static_cast<int>(columns);
  if (sub.count("--size-x") > 0) check_size(f.size_x, "--size-x");
  if (sub.count("--fov") > 0 && !(f.fov_mm > 0.0))
    throw InputError("", "--fov", "= " + format_number(f.fov_mm) + "; must be > 0 (mm)");
  if (use_table) {
    for (const char* flag : {"--count", "--seed", "--components", "--intensity-min", "--intensity-max", "--size-min",
                             "--size-max", "--texture", "--texture-blobs", "--texture-contrast", "--contrast"})
      if (sub.count(flag) > 0) throw InputError("", flag, "only applies with --family");
  }
  if (f.count < 1) throw InputError("", "--count", "= " + std::to_string(f.count) + "; must be >= 1");
  if (static_cast<double>(f.count) * ny * nx > kMaxElements)
    throw InputError("", "--count", std::to_string(f.count) + " x " + std::to_string(ny) + " x " + std::to_string(nx) +
                                        " pixels is more than one output may hold (2^30)");
  RasterOptions raster;
  raster.edge_supersample = f.edge_supersample;
  if (const auto e = raster.validate(); !e.empty()) throw InputError("", "--supersample", e.front());
  require_output_path(f.out, "--out", kImageExtensions);
  if (!f.png.empty()) require_output_path(f.png, "--png", {".png"});

  std::vector<Phantom> objects;
  ImageRecord rec;
  if (use_table) {
    Phantom p = load_phantom_table(f.table);
    if (sub.count("--fov") > 0) p.fov_mm = f.fov_mm;
    objects.push_back(p);
    rec.description = "phantom '" + p.name + "' from " + f.table;
    rec.text_attrs["phantom_source"] = f.table;
  } else {
    const FamilyOptions o = family_from_flags(f, sub);
    objects = make_family(o, f.seed, f.count);
    rec.description = std::to_string(f.count) + " objects of phantom family '" + f.family + "', seed " +
                      std::to_string(f.seed);
    rec.text_attrs["phantom_source"] = "family " + f.family;
    rec.number_attrs["seed"] = static_cast<double>(f.seed);
  }

  apply_threads(ctx);
  const Phantom& first = objects.front();
  rec.pixels = rasterize_stack(objects, ny, nx, raster);
  if (use_table) rec.pixels.shape = Shape{ny, nx};
  bool complex = false;
  for (const Phantom& p : objects) complex = complex || p.is_complex();
  rec.is_complex = complex;
  rec.pixel_spacing_mm[0] = first.fov_mm / ny;
  rec.pixel_spacing_mm[1] = first.fov_mm / nx;
  rec.number_attrs["fov_mm"] = first.fov_mm;
  rec.text_attrs["phantom_name"] = use_table ? first.name : f.family;
  rec.tables[kPhantomTablePath] = phantoms_to_table(objects);

  Provenance prov = make_provenance(ctx);
  if (use_table) {
    prov.extra["phantom_table"] = f.table;
    prov.extra["phantom_table_checksum_fnv1a64"] = file_checksum(f.table);
  } else {
    prov.extra["seed"] = std::to_string(f.seed);
  }
  write_image_any(f.out, rec, prov, PngWindow{});
  if (!f.png.empty()) write_png(f.png, image_slice(rec, 0, f.out), PngWindow{});
  std::string what = use_table ? "phantom '" + first.name + "'" : std::to_string(f.count) + " '" + f.family + "' objects";
  say(ctx, "wrote " + f.out + ": " + what + ", " + rec.pixels.shape.to_string() + ", field of view " +
               std::to_string(static_cast<int>(first.fov_mm + 0.5)) + " mm" + (complex ? ", complex" : ""));
  if (!f.png.empty()) say(ctx, "wrote " + f.png + (use_table ? "" : " (object 0)"));
}

}  // namespace

void register_cmd_phantom(CLI::App& app, Context& ctx) {
  auto flags = std::make_shared<PhantomFlags>();
  CLI::App* sub = app.add_subcommand("phantom", "Raster an analytic phantom table or a random phantom family");
  sub->add_option("--table", flags->table, "Phantom table (phantoms/NAME.toml)");
  sub->add_option("--family", flags->family, "Random family: " + family_names());
  sub->add_option("--count", flags->count, "Objects in the family stack [count, ny, nx] (default 1)");
  sub->add_option("--seed", flags->seed, "Family seed; object i depends only on (seed, i) (default 0)");
  sub->add_option("--size", flags->size, "Grid N or NYxNX (rows x columns), each 1.." + std::to_string(kMaxSize))
      ->required();
  sub->add_option("--size-x", flags->size_x, "Columns, when different from --size N (same as --size NYxNX)");
  sub->add_option("--out", flags->out, "Output: .h5 (with the component table), .nii.gz, .nii, .mha, .nrrd or .png")
      ->required();
  sub->add_option("--png", flags->png, "Also write a quick-look PNG (object 0 of a stack)");
  sub->add_option("--fov", flags->fov_mm, "Field of view in mm (default: the table's; families 256, anatomy 360)");
  sub->add_option("--supersample", flags->edge_supersample,
                  "Sub-rows per edge pixel for anti-aliasing, 0 = none (default 16)");
  sub->add_option("--components", flags->components, "Family: random ellipses per object (default 10)");
  sub->add_option("--intensity-min", flags->intensity_min, "Family: lowest region value, >= 0 (default 0.1)");
  sub->add_option("--intensity-max", flags->intensity_max,
                  "Family: highest region value, <= 1 (default 1.0 ellipses, 0.8 textured)");
  sub->add_option("--size-min", flags->size_min, "Family: smallest semi-axis, units of the [-1,1] square (default 0.03)");
  sub->add_option("--size-max", flags->size_max, "Family: largest semi-axis (default 0.3, at most 0.5)");
  sub->add_option("--texture", flags->texture, "Family: multi-scale blob texture on|off (default: on for textured and anatomy)")
      ->check(CLI::IsMember({"on", "off"}));
  sub->add_option("--texture-blobs", flags->texture_blobs, "Family: fine-scale texture blobs (default 300)");
  sub->add_option("--texture-contrast", flags->texture_contrast,
                  "Family: texture amplitude relative to --intensity-max, or to the tissue for anatomy (default 0.12; "
                  "anatomy 0.05)");
  sub->add_option("--contrast", flags->contrast,
                  "Anatomy: tissue values mri (relative proton density, max 1) or ct (attenuation relative to water, "
                  "max 2) (default mri)");
  sub->footer("Tables: phantoms/shepp-logan.toml, shepp-logan-modified.toml, qc-disk.toml, organ-section.toml.\n"
              "Every object is non-negative; values are relative to water (MRI: proton density; CT: attenuation\n"
              "mu/mu_water, mu_water = 0.02/mm near 65 keV). Maxima: ellipses and textured 1, anatomy 1 (mri) or 2 (ct).\n" +
              std::string(kResearchUseLine));
  sub->callback([flags, sub, &ctx] { run_phantom(*flags, *sub, ctx); });
}

}  // namespace recofold::cli
