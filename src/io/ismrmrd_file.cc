// SPDX-License-Identifier: Apache-2.0
// ISMRMRD raw data through libismrmrd (layout and rules in include/recofold/io/ismrmrd_file.h).
// The only translation unit that includes the ISMRMRD headers.
#include "recofold/io/ismrmrd_file.h"

#include <hdf5.h>
#include <ismrmrd/dataset.h>
#include <ismrmrd/ismrmrd.h>
#include <ismrmrd/version.h>
#include <ismrmrd/xml.h>

#include <cmath>
#include <cstdio>
#include <set>
#include <sstream>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/core/provenance.h"
#include "recofold/io/h5_file.h"

namespace recofold {

namespace {

// libismrmrd reports errors through a handler that prints to stderr by
// default; library code must not print, so the handler is silenced and the
// library's exceptions (which carry the same text) are turned into ours.
extern "C" void ismrmrd_quiet_handler(const char*, int, const char*, int, const char*) {}

void quiet_ismrmrd() {
  static const bool done = [] {
    ISMRMRD::ismrmrd_set_error_handler(ismrmrd_quiet_handler);
    return true;
  }();
  (void)done;
}

// First line of a library message, trimmed.
std::string first_line(const std::string& text) {
  std::string s = text.substr(0, text.find('\n'));
  while (!s.empty() && (s.back() == ' ' || s.back() == '\r')) s.pop_back();
  return s.empty() ? std::string("unknown error") : s;
}

// Flag numbers of ismrmrd.h (bit b is 1 << (b - 1)).
bool flag_set(uint64_t flags, int bit) { return (flags >> (bit - 1)) & 1u; }

std::string trajectory_name(ISMRMRD::TrajectoryType t) {
  switch (t) {
    case ISMRMRD::TrajectoryType::CARTESIAN: return "cartesian";
    case ISMRMRD::TrajectoryType::EPI: return "epi";
    case ISMRMRD::TrajectoryType::RADIAL: return "radial";
    case ISMRMRD::TrajectoryType::GOLDENANGLE: return "goldenangle";
    case ISMRMRD::TrajectoryType::SPIRAL: return "spiral";
    case ISMRMRD::TrajectoryType::OTHER: return "other";
  }
  return "other";
}

// Why an acquisition is not an imaging line; empty for imaging lines.
std::string skip_kind(uint64_t flags) {
  if (flag_set(flags, ISMRMRD::ISMRMRD_ACQ_IS_NAVIGATION_DATA)) return "navigator";
  if (flag_set(flags, ISMRMRD::ISMRMRD_ACQ_IS_PHASECORR_DATA)) return "phase correction";
  if (flag_set(flags, ISMRMRD::ISMRMRD_ACQ_IS_DUMMYSCAN_DATA)) return "dummy scan";
  if (flag_set(flags, ISMRMRD::ISMRMRD_ACQ_IS_HPFEEDBACK_DATA) || flag_set(flags, ISMRMRD::ISMRMRD_ACQ_IS_RTFEEDBACK_DATA))
    return "feedback";
  if (flag_set(flags, ISMRMRD::ISMRMRD_ACQ_IS_SURFACECOILCORRECTIONSCAN_DATA)) return "surface coil correction";
  if (flag_set(flags, ISMRMRD::ISMRMRD_ACQ_IS_PHASE_STABILIZATION_REFERENCE) ||
      flag_set(flags, ISMRMRD::ISMRMRD_ACQ_IS_PHASE_STABILIZATION))
    return "phase stabilisation";
  if (flag_set(flags, ISMRMRD::ISMRMRD_ACQ_IS_PARALLEL_CALIBRATION) &&
      !flag_set(flags, ISMRMRD::ISMRMRD_ACQ_IS_PARALLEL_CALIBRATION_AND_IMAGING))
    return "parallel calibration";
  return "";
}

std::string limit_text(const ISMRMRD::Limit& l) {
  return "{minimum " + std::to_string(l.minimum) + ", maximum " + std::to_string(l.maximum) + ", center " +
         std::to_string(l.center) + "}";
}

// The group holding the dataset: `wanted`, or the only group with an `xml` child.
std::string find_group(const H5Reader& r, const std::string& wanted) {
  if (r.has("/" + wanted)) return wanted;
  std::vector<std::string> with_xml;
  for (const auto& g : r.children("/"))
    if (r.is_group("/" + g) && r.has("/" + g + "/xml")) with_xml.push_back(g);
  if (with_xml.size() == 1) return with_xml.front();
  if (with_xml.empty())
    throw InputError(r.file(), "/" + wanted + "/xml",
                     "no ISMRMRD header: the file has no group '/" + wanted + "' and no group with an 'xml' dataset");
  std::string list;
  for (const auto& g : with_xml) list += (list.empty() ? "" : ", ") + g;
  throw InputError(r.file(), "/" + wanted, "group is missing; the file has several ISMRMRD groups: " + list);
}

void header_texts(const ISMRMRD::IsmrmrdHeader& h, std::map<std::string, std::string>& out) {
  if (h.acquisitionSystemInformation) {
    const auto& s = h.acquisitionSystemInformation.get();
    if (s.systemVendor) out["system_vendor"] = s.systemVendor.get();
    if (s.systemModel) out["system_model"] = s.systemModel.get();
    if (s.systemFieldStrength_T) out["field_strength_T"] = format_sig(s.systemFieldStrength_T.get(), 6);
    if (s.institutionName) out["institution"] = s.institutionName.get();
    if (s.receiverChannels) out["receiver_channels"] = std::to_string(s.receiverChannels.get());
  }
  if (h.measurementInformation) {
    const auto& m = h.measurementInformation.get();
    if (m.measurementID) out["measurement_id"] = m.measurementID.get();
    if (m.protocolName) out["protocol_name"] = m.protocolName.get();
    if (m.seriesDescription) out["series_description"] = m.seriesDescription.get();
  }
  if (h.sequenceParameters) {
    const auto& p = h.sequenceParameters.get();
    auto list = [](const std::vector<float>& v) {
      std::string t;
      for (float x : v) t += (t.empty() ? "" : ", ") + format_sig(x, 6);
      return t;
    };
    if (p.TR) out["TR_ms"] = list(p.TR.get());
    if (p.TE) out["TE_ms"] = list(p.TE.get());
    if (p.flipAngle_deg) out["flip_angle_deg"] = list(p.flipAngle_deg.get());
    if (p.sequence_type) out["sequence_type"] = p.sequence_type.get();
  }
  if (h.experimentalConditions.H1resonanceFrequency_Hz > 0)
    out["H1_frequency_Hz"] = std::to_string(h.experimentalConditions.H1resonanceFrequency_Hz);
}

constexpr const char* kNoiseSigmaParameter = "recofold.noise_sigma";
constexpr const char* kNoiseSigmaTextParameter = "recofold.noise_sigma_text";

}  // namespace

std::vector<std::string> IsmrmrdSelection::validate() const {
  std::vector<std::string> errors;
  auto nonneg = [&](const char* name, int v) {
    if (v < 0) errors.push_back(std::string(name) + " = " + std::to_string(v) + "; must be >= 0");
  };
  nonneg("slice", slice);
  nonneg("contrast", contrast);
  nonneg("repetition", repetition);
  nonneg("phase", phase);
  nonneg("set", set);
  if (average < -1) errors.push_back("average = " + std::to_string(average) + "; must be >= 0 (or the mean of all)");
  if (group.empty()) errors.push_back("group is empty; must name the HDF5 group of the dataset");
  return errors;
}

bool is_ismrmrd_file(const std::string& path, const std::string& group) {
  if (!file_exists(path)) return false;
  try {
    H5Reader r(path);
    return r.has("/" + find_group(r, group) + "/xml");
  } catch (const InputError&) {
    return false;
  }
}

namespace {

// Trajectory, encoded matrix, fields of view, readout crop and the noise level of the header's
// first <encoding>. InputError naming `xml_field` for what recofold cannot import.
void read_encoding(const ISMRMRD::IsmrmrdHeader& hdr, const std::string& path, const std::string& xml_field,
                   RawCartesian& raw) {
  if (hdr.encoding.empty()) throw InputError(path, xml_field, "the XML header has no <encoding> section");
  const ISMRMRD::Encoding& enc = hdr.encoding.front();
  raw.trajectory = trajectory_name(enc.trajectory);
  if (enc.trajectory == ISMRMRD::TrajectoryType::EPI)
    throw InputError(path, xml_field + " trajectory",
                     "EPI raw data need ramp-sampling regridding and ghost (phase) correction, which recofold does "
                     "not do; only Cartesian 2-D acquisitions are imported");
  if (enc.trajectory != ISMRMRD::TrajectoryType::CARTESIAN)
    throw InputError(path, xml_field + " trajectory",
                     "trajectory '" + raw.trajectory +
                         "' is non-Cartesian: recofold's measurement holds Cartesian k-space on the image grid, so "
                         "these samples cannot be placed without gridding; only Cartesian 2-D acquisitions are imported");
  const auto& em = enc.encodedSpace.matrixSize;
  if (em.x < 1 || em.y < 1)
    throw InputError(path, xml_field + " encodedSpace",
                     "encoded matrix " + std::to_string(em.x) + " x " + std::to_string(em.y) + "; must be >= 1 x 1");
  if (em.z > 1)
    throw InputError(path, xml_field + " encodedSpace",
                     "3-D encoding (encoded matrix z = " + std::to_string(em.z) +
                         "); recofold imports 2-D acquisitions, one slice at a time");
  raw.ex = em.x;
  raw.ey = em.y;
  raw.encoded_fov_mm[0] = enc.encodedSpace.fieldOfView_mm.x;
  raw.encoded_fov_mm[1] = enc.encodedSpace.fieldOfView_mm.y;
  raw.encoded_fov_mm[2] = enc.encodedSpace.fieldOfView_mm.z;
  raw.recon_fov_mm[0] = enc.reconSpace.fieldOfView_mm.x;
  raw.recon_fov_mm[1] = enc.reconSpace.fieldOfView_mm.y;
  raw.recon_fov_mm[2] = enc.reconSpace.fieldOfView_mm.z;
  raw.recon_matrix[0] = enc.reconSpace.matrixSize.x;
  raw.recon_matrix[1] = enc.reconSpace.matrixSize.y;
  raw.recon_matrix[2] = enc.reconSpace.matrixSize.z;
  for (int a = 0; a < 2; ++a)
    if (!(raw.encoded_fov_mm[a] > 0) || !std::isfinite(raw.encoded_fov_mm[a]))
      throw InputError(path, xml_field + " encodedSpace",
                       std::string("field of view ") + (a ? "y" : "x") + " = " + format_sig(raw.encoded_fov_mm[a], 6) +
                           " mm; must be positive");
  raw.readout_keep = raw.ex;
  if (raw.recon_fov_mm[0] > 0 && raw.recon_fov_mm[0] < raw.encoded_fov_mm[0] * (1 - 1e-6)) {
    raw.readout_keep = static_cast<Index>(std::lround(raw.ex * raw.recon_fov_mm[0] / raw.encoded_fov_mm[0]));
    if (raw.readout_keep < 1) raw.readout_keep = 1;
  }
  header_texts(hdr, raw.header_texts);
  if (!hdr.userParameters) return;
  for (const auto& p : hdr.userParameters.get().userParameterDouble)
    if (p.name == kNoiseSigmaParameter && std::isfinite(p.value) && p.value >= 0) raw.header_noise_sigma = p.value;
  // The library writes doubles with 6 decimals; the text copy keeps every digit.
  for (const auto& p : hdr.userParameters.get().userParameterString)
    if (p.name == kNoiseSigmaTextParameter) {
      try {
        const double v = std::stod(p.value);
        if (std::isfinite(v) && v >= 0) raw.header_noise_sigma = v;
      } catch (const std::exception&) {
      }
    }
}

// The phase-encoding counter's limits: the line with counter `center` goes to row ey/2.
struct PhaseLimits {
  Index center = 0;
  std::optional<ISMRMRD::Limit> step1;
};

// Encoding limits must fit the matrix and have minimum <= maximum.
PhaseLimits check_encoding_limits(const ISMRMRD::Encoding& enc, const RawCartesian& raw, const std::string& path,
                                  const std::string& xml_field) {
  const Index ey = raw.ey, ex = raw.ex;
  PhaseLimits out;
  out.center = ey / 2;
  if (enc.encodingLimits.kspace_encoding_step_1) {
    const ISMRMRD::Limit l = enc.encodingLimits.kspace_encoding_step_1.get();
    const Index lo = static_cast<Index>(l.minimum) - l.center + ey / 2;
    const Index hi = static_cast<Index>(l.maximum) - l.center + ey / 2;
    if (l.minimum > l.maximum || l.center < l.minimum || l.center > l.maximum || lo < 0 || hi >= ey)
      throw InputError(path, xml_field + " encodingLimits",
                       "kspace_encoding_step_1 " + limit_text(l) + " does not fit the encoded matrix y = " +
                           std::to_string(ey) + " (inconsistent encoding limits)");
    out.center = l.center;
    out.step1 = l;
  }
  if (enc.encodingLimits.kspace_encoding_step_0) {
    const auto l = enc.encodingLimits.kspace_encoding_step_0.get();
    if (l.minimum > l.maximum || l.maximum >= ex)
      throw InputError(path, xml_field + " encodingLimits",
                       "kspace_encoding_step_0 " + limit_text(l) + " does not fit the encoded matrix x = " +
                           std::to_string(ex) + " (inconsistent encoding limits)");
  }
  auto check_limit = [&](const char* name, const ISMRMRD::Optional<ISMRMRD::Limit>& l) {
    if (l && (l.get().minimum > l.get().maximum))
      throw InputError(path, xml_field + " encodingLimits",
                       std::string(name) + " " + limit_text(l.get()) +
                           " has minimum > maximum (inconsistent encoding limits)");
  };
  check_limit("slice", enc.encodingLimits.slice);
  check_limit("contrast", enc.encodingLimits.contrast);
  check_limit("repetition", enc.encodingLimits.repetition);
  check_limit("average", enc.encodingLimits.average);
  return out;
}

// Sums the acquisitions of one file: the noise covariance from noise scans, the selected
// imaging lines into a [coils, ey, ex] grid with a count per cell (repeated lines averaged).
class LineAccumulator {
 public:
  LineAccumulator(RawCartesian& raw, const IsmrmrdSelection& sel, PhaseLimits limits, std::string path,
                  std::string data_field)
      : raw_(raw), sel_(sel), limits_(std::move(limits)), path_(std::move(path)), data_field_(std::move(data_field)) {}

  void add(const ISMRMRD::Acquisition& acq, uint32_t i) {
    const ISMRMRD::AcquisitionHeader& h = acq.getHead();
    if (flag_set(h.flags, ISMRMRD::ISMRMRD_ACQ_IS_NOISE_MEASUREMENT)) return add_noise(acq, i);
    const std::string kind = skip_kind(h.flags);
    if (!kind.empty()) {
      ++raw_.skipped[kind];
      return;
    }
    if (h.encoding_space_ref != 0) {
      ++raw_.skipped["other encoding space"];
      return;
    }
    add_imaging(acq, i);
  }

  void finish();

 private:
  void add_noise(const ISMRMRD::Acquisition& acq, uint32_t i);
  void add_imaging(const ISMRMRD::Acquisition& acq, uint32_t i);
  Index checked_row(const ISMRMRD::AcquisitionHeader& h, const std::string& at) const;
  bool selected(const ISMRMRD::EncodingCounters& idx);
  void no_lines_error() const;

  RawCartesian& raw_;
  const IsmrmrdSelection& sel_;
  PhaseLimits limits_;
  std::string path_, data_field_;
  int coils_ = -1, noise_channels_ = -1;
  int64_t coils_from_ = -1, noise_from_ = -1;
  std::vector<cdouble> acc_, noise_;
  std::vector<int32_t> count_;
  std::set<int> averages_seen_;
};

void LineAccumulator::add_noise(const ISMRMRD::Acquisition& acq, uint32_t i) {
  const ISMRMRD::AcquisitionHeader& h = acq.getHead();
  const int channels = h.active_channels, ns = h.number_of_samples;
  ++raw_.noise_acquisitions;
  if (channels < 1 || ns < 1) return;
  if (noise_channels_ < 0) {
    noise_channels_ = channels;
    noise_from_ = i;
    noise_.assign(static_cast<size_t>(channels * channels), cdouble(0, 0));
    raw_.noise_dwell_us = h.sample_time_us;
  } else if (channels != noise_channels_) {
    throw InputError(path_, data_field_,
                     "acquisition " + std::to_string(i) + " (noise) has " + std::to_string(channels) +
                         " active channels but acquisition " + std::to_string(noise_from_) + " has " +
                         std::to_string(noise_channels_) + " (mixed coil counts)");
  }
  const cfloat* p = acq.getDataPtr();
  for (int s = 0; s < ns; ++s)
    for (int a = 0; a < channels; ++a) {
      const cdouble va(p[static_cast<size_t>(a * ns + s)]);
      for (int b = 0; b < channels; ++b)
        noise_[static_cast<size_t>(a * channels + b)] += va * std::conj(cdouble(p[static_cast<size_t>(b * ns + s)]));
    }
  raw_.noise_samples += ns;
}

// The grid row of a line; counters outside the limits or the matrix are errors (for every
// line, selected or not).
Index LineAccumulator::checked_row(const ISMRMRD::AcquisitionHeader& h, const std::string& at) const {
  const auto& idx = h.idx;
  if (idx.kspace_encode_step_2 != 0)
    throw InputError(path_, data_field_,
                     at + ": kspace_encode_step_2 = " + std::to_string(idx.kspace_encode_step_2) +
                         " in a 2-D encoding (encoded matrix z = 1; inconsistent encoding counters)");
  const auto& lim1 = limits_.step1;
  if (lim1 && (idx.kspace_encode_step_1 < lim1->minimum || idx.kspace_encode_step_1 > lim1->maximum))
    throw InputError(path_, data_field_,
                     at + ": kspace_encode_step_1 = " + std::to_string(idx.kspace_encode_step_1) +
                         " is outside the encoding limits " + limit_text(*lim1) + " (inconsistent encoding limits)");
  const Index row = static_cast<Index>(idx.kspace_encode_step_1) - limits_.center + raw_.ey / 2;
  if (row < 0 || row >= raw_.ey)
    throw InputError(path_, data_field_,
                     at + ": kspace_encode_step_1 = " + std::to_string(idx.kspace_encode_step_1) +
                         " falls outside the encoded matrix y = " + std::to_string(raw_.ey) +
                         " (inconsistent encoding limits)");
  return row;
}

// Whether a line belongs to the selection; counts the reason when it does not.
bool LineAccumulator::selected(const ISMRMRD::EncodingCounters& idx) {
  const std::pair<const char*, bool> other[] = {
      {"other slice", idx.slice != sel_.slice},         {"other contrast", idx.contrast != sel_.contrast},
      {"other repetition", idx.repetition != sel_.repetition}, {"other phase", idx.phase != sel_.phase},
      {"other set", idx.set != sel_.set},
      {"other average", sel_.average >= 0 && idx.average != sel_.average}};
  for (const auto& [reason, differs] : other)
    if (differs) {
      ++raw_.skipped[reason];
      return false;
    }
  return true;
}

void LineAccumulator::add_imaging(const ISMRMRD::Acquisition& acq, uint32_t i) {
  const ISMRMRD::AcquisitionHeader& h = acq.getHead();
  const int channels = h.active_channels, ns = h.number_of_samples;
  const Index ey = raw_.ey, ex = raw_.ex;
  const std::string at = "acquisition " + std::to_string(i);
  // An imaging line: every one, selected or not, must agree on the channels.
  if (coils_ < 0) {
    coils_ = channels;
    coils_from_ = i;
    if (coils_ < 1) throw InputError(path_, data_field_, at + " has no active channels");
    raw_.coils = coils_;
    acc_.assign(static_cast<size_t>(coils_ * ey * ex), cdouble(0, 0));
    count_.assign(static_cast<size_t>(ey * ex), 0);
    raw_.dwell_us = h.sample_time_us;
  } else if (channels != coils_) {
    throw InputError(path_, data_field_,
                     at + " has " + std::to_string(channels) + " active channels but acquisition " +
                         std::to_string(coils_from_) + " has " + std::to_string(coils_) + " (mixed coil counts)");
  }
  const auto& idx = h.idx;
  for (const auto& [name, v] : {std::pair<const char*, int>{"slice", idx.slice}, {"contrast", idx.contrast},
                                {"repetition", idx.repetition}, {"phase", idx.phase}, {"set", idx.set},
                                {"average", idx.average}}) {
    auto it = raw_.counter_max.find(name);
    if (it == raw_.counter_max.end() || v > it->second) raw_.counter_max[name] = v;
  }
  const Index row = checked_row(h, at);
  if (!selected(idx)) return;
  if (ns < 1) throw InputError(path_, data_field_, at + " has no samples");
  const int pre = h.discard_pre, post = h.discard_post;
  if (pre + post >= ns)
    throw InputError(path_, data_field_,
                     at + ": discard_pre + discard_post = " + std::to_string(pre + post) + " leaves none of its " +
                         std::to_string(ns) + " samples");
  // center_sample 0 on a full-length readout means "not stated": symmetric echo.
  const Index centre = (h.center_sample == 0 && ns == ex) ? ex / 2 : static_cast<Index>(h.center_sample);
  const Index first_col = ex / 2 + (pre - centre), last_col = ex / 2 + (ns - post - 1 - centre);
  if (first_col < 0 || last_col >= ex)
    throw InputError(path_, data_field_,
                     at + ": samples " + std::to_string(pre) + ".." + std::to_string(ns - post - 1) +
                         " with center_sample " + std::to_string(h.center_sample) +
                         " fall outside the encoded matrix x = " + std::to_string(ex));
  const bool reverse = flag_set(h.flags, ISMRMRD::ISMRMRD_ACQ_IS_REVERSE);
  const cfloat* p = acq.getDataPtr();
  for (int s = pre; s < ns - post; ++s) {
    const int src = reverse ? ns - 1 - s : s;
    const Index col = ex / 2 + (s - centre);
    for (int c = 0; c < coils_; ++c)
      acc_[static_cast<size_t>((c * ey + row) * ex + col)] += cdouble(p[static_cast<size_t>(c * ns + src)]);
    ++count_[static_cast<size_t>(row * ex + col)];
  }
  averages_seen_.insert(idx.average);
  ++raw_.selected_lines;
}

// No selected line: name the first selector the file does not have.
void LineAccumulator::no_lines_error() const {
  const std::pair<const char*, int> wanted[] = {{"slice", sel_.slice},         {"contrast", sel_.contrast},
                                                {"repetition", sel_.repetition}, {"phase", sel_.phase},
                                                {"set", sel_.set},             {"average", sel_.average}};
  for (const auto& [name, value] : wanted) {
    if (value < 0) continue;
    const int top = raw_.counter_max.count(name) ? raw_.counter_max.at(name) : 0;
    if (value > top)
      throw InputError(path_, name,
                       std::string(name) + " " + std::to_string(value) + " is out of range: the file has " + name +
                           " 0.." + std::to_string(top));
  }
  throw InputError(path_, "slice",
                   "no imaging line has slice " + std::to_string(sel_.slice) + ", contrast " +
                       std::to_string(sel_.contrast) + ", repetition " + std::to_string(sel_.repetition) +
                       ", phase " + std::to_string(sel_.phase) + ", set " + std::to_string(sel_.set) +
                       (sel_.average >= 0 ? ", average " + std::to_string(sel_.average) : std::string()));
}

// Averages repeated samples into raw.kspace / raw.sampled and normalises the noise covariance.
void LineAccumulator::finish() {
  if (coils_ < 0) throw InputError(path_, data_field_, "has no imaging acquisitions (only noise or calibration data)");
  if (noise_channels_ >= 0 && noise_channels_ != coils_)
    throw InputError(path_, data_field_,
                     "the noise acquisitions have " + std::to_string(noise_channels_) +
                         " active channels but the imaging lines have " + std::to_string(coils_) +
                         " (mixed coil counts)");
  if (raw_.selected_lines == 0) no_lines_error();
  const Index ey = raw_.ey, ex = raw_.ex;
  raw_.averages_used = static_cast<int>(averages_seen_.size());
  raw_.kspace = NdArray<cfloat>(Shape{coils_, ey, ex});
  raw_.sampled = NdArray<uint8_t>(Shape{ey, ex});
  for (Index p = 0; p < ey * ex; ++p) {
    const int32_t k = count_[static_cast<size_t>(p)];
    if (k == 0) continue;
    raw_.sampled.data[static_cast<size_t>(p)] = 1;
    for (int c = 0; c < coils_; ++c)
      raw_.kspace.data[static_cast<size_t>(c * ey * ex + p)] =
          cfloat(acc_[static_cast<size_t>(c * ey * ex + p)] / static_cast<double>(k));
  }
  if (raw_.noise_samples > 0) {
    for (auto& v : noise_) v /= static_cast<double>(raw_.noise_samples);
    raw_.noise_covariance = std::move(noise_);
  }
}

}  // namespace

RawCartesian read_ismrmrd_file(const std::string& path, const IsmrmrdSelection& sel) {
  quiet_ismrmrd();
  {
    const auto errors = sel.validate();
    if (!errors.empty()) throw InputError(path, errors.front().substr(0, errors.front().find(' ')), errors.front());
  }
  if (!file_exists(path)) throw InputError(path, "", "file does not exist");
  std::string group;
  {
    H5Reader r(path);  // InputError for files that are not HDF5
    group = find_group(r, sel.group);
    if (!r.has("/" + group + "/xml"))
      throw InputError(path, "/" + group + "/xml", "no ISMRMRD header (the XML dataset is missing)");
    if (!r.has("/" + group + "/data"))
      throw InputError(path, "/" + group + "/data", "has no acquisitions (the dataset is missing)");
  }
  const std::string xml_field = "/" + group + "/xml", data_field = "/" + group + "/data";

  RawCartesian raw;
  ISMRMRD::IsmrmrdHeader hdr;
  std::unique_ptr<ISMRMRD::Dataset> d;
  try {
    d = std::make_unique<ISMRMRD::Dataset>(path.c_str(), group.c_str(), false);
    d->readHeader(raw.xml);
  } catch (const std::exception& e) {
    throw InputError(path, xml_field, "cannot read the ISMRMRD header: " + first_line(e.what()));
  }
  if (raw.xml.find_first_not_of(" \t\r\n") == std::string::npos)
    throw InputError(path, xml_field, "the XML header is empty");
  try {
    ISMRMRD::deserialize(raw.xml.c_str(), hdr);
  } catch (const std::exception& e) {
    throw InputError(path, xml_field, "the XML header does not parse: " + first_line(e.what()));
  }
  read_encoding(hdr, path, xml_field, raw);
  LineAccumulator lines(raw, sel, check_encoding_limits(hdr.encoding.front(), raw, path, xml_field), path, data_field);

  uint32_t n = 0;
  try {
    n = d->getNumberOfAcquisitions();
  } catch (const std::exception& e) {
    throw InputError(path, data_field, "cannot read the acquisitions: " + first_line(e.what()));
  }
  raw.acquisitions = n;
  if (n == 0) throw InputError(path, data_field, "has no acquisitions (zero acquisitions)");
  ISMRMRD::Acquisition acq;
  for (uint32_t i = 0; i < n; ++i) {
    try {
      d->readAcquisition(i, acq);
    } catch (const std::exception& e) {
      throw InputError(path, data_field, "acquisition " + std::to_string(i) + ": " + first_line(e.what()));
    }
    lines.add(acq, i);
  }
  lines.finish();
  return raw;
}

namespace {

// The rows of a line mask (every sampled row fully sampled); InputError otherwise.
std::vector<Index> exported_rows(const MriData& mri, Index ny, Index nx, const std::string& source) {
  std::vector<Index> rows;
  for (Index r = 0; r < ny; ++r) {
    Index sampled = 0;
    for (Index c = 0; c < nx; ++c) sampled += mri.mask.data[static_cast<size_t>(r * nx + c)] ? 1 : 0;
    if (sampled == 0) continue;
    if (sampled != nx)
      throw InputError(source, "/mri/mask",
                       "row " + std::to_string(r) + " samples " + std::to_string(sampled) + " of " +
                           std::to_string(nx) +
                           " points: Cartesian raw data store whole readout lines, so only masks of full rows "
                           "(line patterns) can be exported");
    rows.push_back(r);
  }
  if (rows.empty()) throw InputError(source, "/mri/mask", "samples nothing; there is no line to export");
  return rows;
}

// The XML header of a Cartesian single-slice measurement, with our user parameters.
std::string export_header_xml(const Measurement& m, Index coils, const std::string& source) {
  const MriData& mri = *m.mri;
  const Index ny = m.ny, nx = m.nx;
  ISMRMRD::IsmrmrdHeader h;
  h.version = ISMRMRD_XMLHDR_VERSION;
  h.experimentalConditions.H1resonanceFrequency_Hz = 0;  // not known for simulated data
  ISMRMRD::AcquisitionSystemInformation sys;
  sys.receiverChannels = static_cast<unsigned short>(coils);
  h.acquisitionSystemInformation = sys;
  ISMRMRD::Encoding e;
  const float fov_x = static_cast<float>(nx * m.pixel_spacing_mm[1]);
  const float fov_y = static_cast<float>(ny * m.pixel_spacing_mm[0]);
  const float thickness = static_cast<float>(mri.numbers.count("slice_thickness_mm") ? mri.numbers.at("slice_thickness_mm") : 1.0);
  e.encodedSpace.matrixSize = ISMRMRD::MatrixSize(static_cast<unsigned short>(nx), static_cast<unsigned short>(ny), 1);
  e.encodedSpace.fieldOfView_mm = ISMRMRD::FieldOfView_mm{fov_x, fov_y, thickness};
  e.reconSpace = e.encodedSpace;
  e.encodingLimits.kspace_encoding_step_0 =
      ISMRMRD::Limit(0, static_cast<unsigned short>(nx - 1), static_cast<unsigned short>(nx / 2));
  e.encodingLimits.kspace_encoding_step_1 =
      ISMRMRD::Limit(0, static_cast<unsigned short>(ny - 1), static_cast<unsigned short>(ny / 2));
  e.encodingLimits.slice = ISMRMRD::Limit(0, 0, 0);
  e.encodingLimits.average = ISMRMRD::Limit(0, 0, 0);
  e.encodingLimits.contrast = ISMRMRD::Limit(0, 0, 0);
  e.encodingLimits.repetition = ISMRMRD::Limit(0, 0, 0);
  e.trajectory = ISMRMRD::TrajectoryType::CARTESIAN;
  h.encoding.push_back(e);
  ISMRMRD::UserParameters up;
  up.userParameterDouble.push_back(ISMRMRD::UserParameterDouble{kNoiseSigmaParameter, mri.noise_sigma});
  {
    char text[40];
    std::snprintf(text, sizeof text, "%.17g", mri.noise_sigma);
    up.userParameterString.push_back(ISMRMRD::UserParameterString{kNoiseSigmaTextParameter, text});
  }
  up.userParameterString.push_back(ISMRMRD::UserParameterString{"recofold.research_use", kResearchUseLine});
  up.userParameterString.push_back(ISMRMRD::UserParameterString{"recofold.producer", producer_string()});
  if (!source.empty()) up.userParameterString.push_back(ISMRMRD::UserParameterString{"recofold.source", source});
  h.userParameters = up;
  std::ostringstream xml;
  ISMRMRD::serialize(h, xml);
  return xml.str();
}

// Acquisition i of `rows` (row r of every coil), with the first/last flags.
void fill_acquisition(ISMRMRD::Acquisition& acq, const MriData& mri, Index ny, Index nx, Index coils,
                      const std::vector<Index>& rows, size_t i) {
  const Index r = rows[i];
  acq.clearAllFlags();
  if (i == 0) {
    acq.setFlag(ISMRMRD::ISMRMRD_ACQ_FIRST_IN_SLICE);
    acq.setFlag(ISMRMRD::ISMRMRD_ACQ_FIRST_IN_ENCODE_STEP1);
  }
  if (i + 1 == rows.size()) {
    acq.setFlag(ISMRMRD::ISMRMRD_ACQ_LAST_IN_SLICE);
    acq.setFlag(ISMRMRD::ISMRMRD_ACQ_LAST_IN_ENCODE_STEP1);
    acq.setFlag(ISMRMRD::ISMRMRD_ACQ_LAST_IN_MEASUREMENT);
  }
  acq.available_channels() = static_cast<uint16_t>(coils);
  acq.center_sample() = static_cast<uint16_t>(nx / 2);
  for (Index c = 0; c < coils; ++c) acq.setChannelActive(static_cast<uint16_t>(c));
  acq.idx().kspace_encode_step_1 = static_cast<uint16_t>(r);
  {
    // The header is packed (2-byte alignment): its 4-byte fields are set on a copy, not
    // through the accessors' references (a misaligned store).
    ISMRMRD::AcquisitionHeader h = acq.getHead();
    h.scan_counter = static_cast<uint32_t>(i);
    h.read_dir[0] = 1.0f;
    h.phase_dir[1] = 1.0f;
    h.slice_dir[2] = 1.0f;
    acq.setHead(h);
  }
  for (Index c = 0; c < coils; ++c)
    for (Index s = 0; s < nx; ++s)
      acq.data(static_cast<uint16_t>(s), static_cast<uint16_t>(c)) =
          mri.kspace.data[static_cast<size_t>((c * ny + r) * nx + s)];
}

// The research-use mark on the file itself (SAFETY.md), beside the XML user parameter.
void mark_research_use(const std::string& file) {
  const hid_t f = H5Fopen(file.c_str(), H5F_ACC_RDWR, H5P_DEFAULT);
  if (f < 0) throw WorkError("cannot reopen the temporary file to mark it");
  const hid_t space = H5Screate(H5S_SCALAR);
  const int64_t one = 1;
  const hid_t a = H5Acreate2(f, "research_use_only", H5T_STD_I64LE, space, H5P_DEFAULT, H5P_DEFAULT);
  const herr_t ok = a >= 0 ? H5Awrite(a, H5T_NATIVE_INT64, &one) : -1;
  if (a >= 0) H5Aclose(a);
  H5Sclose(space);
  H5Fclose(f);
  if (ok < 0) throw WorkError("cannot write the research_use_only attribute");
}

}  // namespace

void write_ismrmrd_file(const std::string& path, const Measurement& m, const std::string& source) {
  quiet_ismrmrd();
  if (!m.mri) throw InputError(source, "/mri", "only MRI measurements can be written as ISMRMRD raw data");
  const MriData& mri = *m.mri;
  const Shape& ks = mri.kspace.shape;
  if (ks.rank() != 3 || ks[1] != m.ny || ks[2] != m.nx || mri.mask.shape != (Shape{m.ny, m.nx}))
    throw InputError(source, "/mri/kspace", "shape " + ks.to_string() + " does not match the grid and mask");
  const Index coils = ks[0], ny = m.ny, nx = m.nx;
  if (nx > 65535 || ny > 65535 || coils > 65535)
    throw InputError(source, "/mri/kspace", "shape " + ks.to_string() + " exceeds the format's 16-bit sizes");
  const std::vector<Index> rows = exported_rows(mri, ny, nx, source);
  const std::string xml = export_header_xml(m, coils, source);

  AtomicFile out(path);
  try {
    {
      ISMRMRD::Dataset d(out.temp_path().c_str(), "dataset", true);
      d.writeHeader(xml);
      ISMRMRD::Acquisition acq(static_cast<uint16_t>(nx), static_cast<uint16_t>(coils));
      for (size_t i = 0; i < rows.size(); ++i) {
        fill_acquisition(acq, mri, ny, nx, coils, rows, i);
        d.appendAcquisition(acq);
      }
    }
    mark_research_use(out.temp_path());
  } catch (const WorkError& e) {
    throw WorkError("cannot write " + path + ": " + e.what());
  } catch (const std::exception& e) {
    throw WorkError("cannot write " + path + ": " + first_line(e.what()));
  }
  out.commit();
}

}  // namespace recofold
