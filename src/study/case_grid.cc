// SPDX-License-Identifier: Apache-2.0
// Expansion of a study config into acquisitions and cases; shards.
#include "recofold/study/case_grid.h"

#include <algorithm>
#include <cstdlib>
#include <map>

#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/core/rng.h"
#include "study_util.h"

namespace recofold {

std::string Acquisition::key() const {
  if (modality == Modality::kMri && non_cartesian())
    return "mri/" + trajectory + "/" + std::to_string(readouts) + "x" + std::to_string(samples / std::max(readouts, 1)) +
           "/c" + std::to_string(coils) + "/s" + format_number(noise);
  if (modality == Modality::kMri)
    return "mri/" + pattern + "/R" + format_number(accel) + "/c" + std::to_string(coils) + "/s" +
           format_number(noise);
  if (modality == Modality::kDenoise) return "denoise/s" + format_number(noise);
  if (modality == Modality::kInpaint)
    return "inpaint/" + pattern + "/k" + format_number(keep) + "/s" + format_number(noise);
  return "ct/v" + std::to_string(views) + "/a" + format_number(arc) + "/p" + format_number(photons);
}

const std::vector<std::string>& acquisition_axes() {
  static const std::vector<std::string> axes = {"pattern", "trajectory", "readouts", "samples", "accel",
                                                     "coils",   "noise",      "keep",     "views",   "arc",
                                                     "photons"};
  return axes;
}

std::string axis_value(const Acquisition& a, const std::string& axis) {
  if (a.modality == Modality::kMri) {
    if (axis == "pattern") return a.pattern;
    if (axis == "trajectory") return a.trajectory;
    if (axis == "readouts") return a.non_cartesian() ? std::to_string(a.readouts) : "";
    if (axis == "samples") return a.non_cartesian() ? std::to_string(a.samples) : "";
    if (axis == "accel") return format_number(a.accel);
    if (axis == "coils") return std::to_string(a.coils);
    if (axis == "noise") return format_number(a.noise);
  } else if (a.modality == Modality::kDenoise) {
    if (axis == "noise") return format_number(a.noise);
  } else if (a.modality == Modality::kInpaint) {
    if (axis == "pattern") return a.pattern;
    if (axis == "keep") return format_number(a.keep);
    if (axis == "noise") return format_number(a.noise);
  } else {
    if (axis == "views") return std::to_string(a.views);
    if (axis == "arc") return format_number(a.arc);
    if (axis == "photons") return format_number(a.photons);
  }
  return "";
}

TrajectoryOptions trajectory_options(const StudyConfig& c, const Acquisition& a) {
  TrajectoryOptions o;
  o.kind = *parse_trajectory_kind(a.trajectory);
  o.ny = c.ny;
  o.nx = c.nx;
  if (o.kind == TrajectoryKind::kSpiral) {
    o.interleaves = a.readouts;
  } else {
    o.spokes = a.readouts;
    o.readout = a.readout;
  }
  return o;
}

namespace {
// ny nx / samples to 6 significant digits (the accel column's text).
double trajectory_accel(const StudyConfig& c, Index samples) {
  return std::strtod(format_sig(double(c.ny) * double(c.nx) / double(samples), 6).c_str(), nullptr);
}

// [mri] trajectory x readouts (spokes or interleaves) x coils x noise.
void append_trajectory_acquisitions(const StudyConfig& c, std::vector<Acquisition>& out) {
  for (const std::string& kind : c.mri->trajectories) {
    const bool spiral = *parse_trajectory_kind(kind) == TrajectoryKind::kSpiral;
    for (int readouts : spiral ? c.mri->interleaves : c.mri->spokes) {
      Acquisition a;
      a.modality = Modality::kMri;
      a.trajectory = kind;
      a.readouts = readouts;
      a.readout = spiral ? 0 : c.mri->readout;
      a.samples = trajectory_point_count(trajectory_options(c, a));
      a.accel = trajectory_accel(c, a.samples);
      for (int coils : c.mri->coils)
        for (double s : c.mri->noise_sigmas) {
          a.coils = coils;
          a.noise = s;
          out.push_back(a);
        }
    }
  }
}
}  // namespace

std::vector<Acquisition> expand_acquisitions(const StudyConfig& c) {
  std::vector<Acquisition> out;
  if (c.mri)
    for (const auto& p : c.mri->patterns)
      for (double r : c.mri->accelerations)
        for (int coils : c.mri->coils)
          for (double s : c.mri->noise_sigmas) {
            Acquisition a;
            a.modality = Modality::kMri;
            a.pattern = p;
            a.accel = r;
            a.coils = coils;
            a.noise = s;
            out.push_back(a);
          }
  if (c.mri) append_trajectory_acquisitions(c, out);
  if (c.ct)
    for (int v : c.ct->views)
      for (double arc : c.ct->arcs_deg)
        for (double ph : c.ct->photons) {
          Acquisition a;
          a.modality = Modality::kCt;
          a.views = v;
          a.arc = arc;
          a.photons = ph;
          out.push_back(a);
        }
  if (c.denoise)
    for (double s : c.denoise->noise_sigmas) {
      Acquisition a;
      a.modality = Modality::kDenoise;
      a.noise = s;
      out.push_back(a);
    }
  if (c.inpaint)
    for (const auto& p : c.inpaint->patterns)
      for (double k : c.inpaint->keeps)
        for (double s : c.inpaint->noise_sigmas) {
          Acquisition a;
          a.modality = Modality::kInpaint;
          a.pattern = p;
          a.keep = k;
          a.noise = s;
          out.push_back(a);
        }
  return out;
}

namespace {
uint64_t seed_of(uint64_t study_seed, const std::string& key) {
  Rng rng = Rng::for_stream(study_seed, fnv1a(key));
  // Keep seeds in the signed 63-bit range so they survive int64 config and file attributes.
  return rng.next_u64() >> 1;
}

// The acquisitions a measured object runs: the MRI ones, with the coils axis
// replaced by the file's coil count (indices into g.acquisitions, appended when new).
std::vector<size_t> measured_acquisitions(const StudyConfig& c, const StudyPhantom& p, CaseGrid& g,
                                          size_t simulated) {
  std::vector<size_t> out;
  const bool own_trajectory = p.measured->mri->non_cartesian();
  std::vector<Acquisition> points;
  if (own_trajectory) {  // the file's own trajectory, per noise value
    const Trajectory& t = *p.measured->mri->trajectory;
    for (double s : c.mri->noise_sigmas) {
      Acquisition m;
      m.modality = Modality::kMri;
      m.trajectory = std::string(to_string(t.kind));
      m.readouts = static_cast<int>(t.readouts);
      m.samples = t.points();
      m.accel = trajectory_accel(c, m.samples);
      m.coils = p.measured_coils;
      m.noise = s;
      points.push_back(m);
    }
  } else {  // the Cartesian points (a Cartesian file is not resampled onto trajectories)
    for (size_t a = 0; a < simulated; ++a) {
      const Acquisition& acq = g.acquisitions[a];
      if (acq.modality != Modality::kMri || acq.non_cartesian() || acq.coils != c.mri->coils.front()) continue;
      points.push_back(acq);
      points.back().coils = p.measured_coils;
    }
  }
  for (const Acquisition& m : points) {
    size_t k = 0;
    while (k < g.acquisitions.size() && g.acquisitions[k].key() != m.key()) ++k;
    if (k == g.acquisitions.size()) g.acquisitions.push_back(m);
    out.push_back(k);
  }
  return out;
}
}  // namespace

CaseGrid expand_grid(const StudyConfig& c) {
  CaseGrid g;
  g.acquisitions = expand_acquisitions(c);
  const size_t simulated = g.acquisitions.size();
  std::vector<size_t> all(simulated);
  for (size_t a = 0; a < simulated; ++a) all[a] = a;
  int group = 0;
  for (size_t p = 0; p < c.phantoms.size(); ++p) {
    const std::vector<size_t> acqs = c.phantoms[p].measured ? measured_acquisitions(c, c.phantoms[p], g, simulated) : all;
    for (size_t a : acqs) {
      const Acquisition& acq = g.acquisitions[a];
      for (int r = 0; r < c.repetitions; ++r) {
        const std::string rep = "r" + std::to_string(r);
        const std::string mkey = c.phantoms[p].label + "|" + acq.key() + "|" + rep;
        bool any = false;
        for (size_t m = 0; m < c.methods.size(); ++m) {
          if (!c.methods[m].applies_to(acq.modality)) continue;
          StudyCase sc;
          sc.index = static_cast<int>(g.cases.size());
          sc.phantom = static_cast<int>(p);
          sc.acquisition = static_cast<int>(a);
          sc.method = static_cast<int>(m);
          sc.repetition = r;
          sc.group = group;
          sc.measurement_key = mkey;
          sc.key = c.phantoms[p].label + "|" + acq.key() + "|" + c.methods[m].name + "|" + rep;
          // The mask depends on the sampling only (pattern, R, repetition), so
          // the coil and noise axes compare the same sampling pattern.
          // Inpainting pixels depend on (pattern, repetition): keep levels nest.
          sc.mask_seed = acq.modality == Modality::kInpaint
                             ? seed_of(c.seed, "pixels|" + acq.pattern + "|" + rep)
                             : seed_of(c.seed, "mask|" + acq.pattern + "|" + format_number(acq.accel) + "|" + rep);
          sc.noise_seed = seed_of(c.seed, "noise|" + mkey);
          g.cases.push_back(sc);
          any = true;
        }
        if (any) ++group;
      }
    }
  }
  g.groups = group;
  return g;
}

Shard Shard::parse(const std::string& text, const std::string& field) {
  const size_t slash = text.find('/');
  auto bad = [&](const std::string& why) { return InputError("", field, "'" + text + "'; " + why); };
  if (slash == std::string::npos) throw bad("expected I/N, e.g. 1/4");
  char* end = nullptr;
  const std::string a = text.substr(0, slash), b = text.substr(slash + 1);
  const long i = std::strtol(a.c_str(), &end, 10);
  if (a.empty() || *end != '\0') throw bad("expected I/N with integers");
  const long n = std::strtol(b.c_str(), &end, 10);
  if (b.empty() || *end != '\0') throw bad("expected I/N with integers");
  if (n < 1 || n > 100000) throw bad("N must be in 1..100000");
  if (i < 1 || i > n) throw bad("I must be in 1..N (shard " + a + " of " + b + " does not exist)");
  Shard s;
  s.index = static_cast<int>(i);
  s.count = static_cast<int>(n);
  return s;
}

}  // namespace recofold
