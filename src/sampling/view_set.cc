// SPDX-License-Identifier: Apache-2.0
// CT view sets: equally spaced and golden-angle arcs, angle files and TOML protocols.
#include "recofold/sampling/view_set.h"

#include <cmath>
#include <cstdlib>
#include <fstream>
#include <sstream>

#include "recofold/core/config.h"
#include "recofold/core/error.h"

namespace recofold {

namespace {
constexpr double kDeg = M_PI / 180.0;

std::string num(double v) {
  std::ostringstream s;
  s << v;
  return s.str();
}
}  // namespace

std::string_view to_string(ViewOrder order) { return order == ViewOrder::kGolden ? "golden" : "sequential"; }

std::optional<ViewOrder> parse_view_order(std::string_view text) {
  if (text == "sequential") return ViewOrder::kSequential;
  if (text == "golden") return ViewOrder::kGolden;
  return std::nullopt;
}

std::vector<std::string> ViewSetSpec::validate() const {
  std::vector<std::string> errors;
  if (!file.empty()) return errors;
  if (views < 1) errors.push_back("views = " + std::to_string(views) + "; must be >= 1");
  if (!(arc_deg > 0.0 && arc_deg <= 360.0)) errors.push_back("arc_deg = " + num(arc_deg) + "; must be in (0, 360]");
  if (!std::isfinite(start_deg)) errors.push_back("start_deg = " + num(start_deg) + "; must be finite");
  return errors;
}

std::vector<double> equally_spaced_views(int views, double arc_deg, double start_deg) {
  std::vector<double> a(static_cast<size_t>(std::max(views, 0)));
  for (int i = 0; i < views; ++i) a[static_cast<size_t>(i)] = (start_deg + arc_deg * i / views) * kDeg;
  return a;
}

std::vector<double> golden_angle_views(int views, double arc_deg, double start_deg) {
  const double g = 0.5 * (std::sqrt(5.0) - 1.0);
  std::vector<double> a(static_cast<size_t>(std::max(views, 0)));
  for (int i = 0; i < views; ++i) {
    const double f = std::fmod(i * g, 1.0);
    a[static_cast<size_t>(i)] = (start_deg + f * arc_deg) * kDeg;
  }
  return a;
}

std::vector<double> read_view_file(const std::string& path) {
  std::ifstream in(path);
  if (!in) throw InputError(path, "angle", "cannot open the view file");
  std::vector<double> angles;
  std::string line;
  int number = 0;
  while (std::getline(in, line)) {
    ++number;
    const auto hash = line.find('#');
    if (hash != std::string::npos) line.erase(hash);
    std::istringstream s(line);
    std::string word, extra;
    if (!(s >> word)) continue;
    char* end = nullptr;
    const double v = std::strtod(word.c_str(), &end);
    if (end == word.c_str() || *end != '\0' || !std::isfinite(v) || (s >> extra))
      throw InputError(path, "angle", "'" + line + "' is not one finite angle in degrees", number);
    angles.push_back(v * kDeg);
  }
  if (angles.empty()) throw InputError(path, "angle", "the file holds no angles");
  return angles;
}

std::vector<double> make_view_set(const ViewSetSpec& spec) {
  if (!spec.file.empty()) return read_view_file(spec.file);
  const auto errors = spec.validate();
  if (!errors.empty()) {
    std::string all;
    for (const auto& e : errors) all += (all.empty() ? "" : "; ") + e;
    throw InputError("", "view set", all);
  }
  return spec.order == ViewOrder::kGolden ? golden_angle_views(spec.views, spec.arc_deg, spec.start_deg)
                                          : equally_spaced_views(spec.views, spec.arc_deg, spec.start_deg);
}

CtProtocol load_ct_protocol(const std::string& path) {
  const Config cfg = Config::load(path);
  cfg.expect_only({"kind", "description", "views", "arc_deg", "start_deg", "order", "file", "geometry"});
  const std::string kind = cfg.get_string("kind");
  if (kind != "ct-views") throw cfg.error("kind", "'" + kind + "'; a CT protocol has kind = \"ct-views\"");
  CtProtocol p;
  p.description = cfg.get_string_or("description", "");
  if (cfg.has("file")) {
    std::string f = cfg.get_string("file");
    if (!f.empty() && f[0] != '/') {
      const auto slash = path.find_last_of('/');
      if (slash != std::string::npos) f = path.substr(0, slash + 1) + f;
    }
    p.views.file = f;
  } else {
    const int64_t v = cfg.get_int("views");
    if (v < 1 || v > 1000000) throw cfg.error("views", std::to_string(v) + "; must be in [1, 1000000]");
    p.views.views = static_cast<int>(v);
  }
  p.views.arc_deg = cfg.get_double_or("arc_deg", 180.0);
  if (!(p.views.arc_deg > 0.0 && p.views.arc_deg <= 360.0))
    throw cfg.error("arc_deg", num(p.views.arc_deg) + "; must be in (0, 360]");
  p.views.start_deg = cfg.get_double_or("start_deg", 0.0);
  if (!std::isfinite(p.views.start_deg)) throw cfg.error("start_deg", "must be finite");
  const std::string order = cfg.get_string_or("order", "sequential");
  const auto o = parse_view_order(order);
  if (!o) throw cfg.error("order", "'" + order + "'; expected sequential or golden");
  p.views.order = *o;
  if (cfg.has("geometry")) {
    const std::string geometry = cfg.get_string("geometry");
    p.beam = parse_ct_beam(geometry);
    if (!p.beam) throw cfg.error("geometry", "'" + geometry + "'; expected parallel or fan");
  }
  return p;
}

}  // namespace recofold
