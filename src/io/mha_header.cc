// SPDX-License-Identifier: Apache-2.0
// The strict MetaImage header check of mha_header.h (field names as MetaIO
// and ITK's MetaImage writer use them; from memory of the format).
#include "mha_header.h"

#include <cctype>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <map>
#include <set>
#include <sstream>
#include <vector>

#include "recofold/core/checks.h"
#include "recofold/core/error.h"

namespace recofold::internal {

namespace {

constexpr size_t kMaxLines = 256;
constexpr size_t kMaxLineBytes = 1024;

// How many numbers a field holds: a fixed count, NDims or NDims x NDims.
enum class Count { One, Four, NDims, NDimsSquared };

const std::map<std::string, Count>& number_fields() {
  static const std::map<std::string, Count> fields = {
      {"ElementSpacing", Count::NDims},   {"ElementSize", Count::NDims},
      {"Offset", Count::NDims},           {"Position", Count::NDims},
      {"Origin", Count::NDims},           {"CenterOfRotation", Count::NDims},
      {"TransformMatrix", Count::NDimsSquared}, {"Rotation", Count::NDimsSquared},
      {"Orientation", Count::NDimsSquared},     {"Color", Count::Four},
      {"SequenceID", Count::Four},        {"ElementMin", Count::One},
      {"ElementMax", Count::One},         {"ElementToIntensityFunctionSlope", Count::One},
      {"ElementToIntensityFunctionOffset", Count::One}, {"ID", Count::One},
      {"ParentID", Count::One},           {"CompressedDataSize", Count::One}};
  return fields;
}

const std::set<std::string> kYesNoFields = {"BinaryData", "BinaryDataByteOrderMSB", "ElementByteOrderMSB",
                                            "CompressedData"};
const std::set<std::string> kElementTypes = {"MET_CHAR", "MET_UCHAR", "MET_SHORT", "MET_USHORT",
                                             "MET_INT", "MET_UINT", "MET_LONG", "MET_ULONG",
                                             "MET_LONG_LONG", "MET_ULONG_LONG", "MET_FLOAT", "MET_DOUBLE"};

class MhaHeaderParser {
 public:
  explicit MhaHeaderParser(const std::string& path) : path_(path) {}

  [[noreturn]] void bad(const std::string& key, const std::string& what) const {
    throw InputError(path_, key.empty() ? "MetaImage header" : key, what, line_no_);
  }

  // Whitespace-separated finite numbers; exactly `want` of them.
  std::vector<double> numbers(const std::string& key, const std::string& value, size_t want) const {
    std::istringstream in(value);
    std::vector<double> out;
    std::string tok;
    while (in >> tok) {
      char* end = nullptr;
      const double v = std::strtod(tok.c_str(), &end);
      if (tok.size() > 64 || end != tok.c_str() + tok.size() || !std::isfinite(v) || std::fabs(v) > 1e9)
        bad(key, "'" + tok.substr(0, 64) + "' is not a finite number (|value| <= 1e9)");
      out.push_back(v);
    }
    if (out.size() != want)
      bad(key, "holds " + std::to_string(out.size()) + " numbers; expected " + std::to_string(want) +
                   (ndims_ ? " for NDims = " + std::to_string(ndims_) : std::string()));
    return out;
  }

  long long integer(const std::string& key, const std::string& value, long long lo, long long hi) const {
    const double v = numbers(key, value, 1)[0];
    if (std::floor(v) != v || v < static_cast<double>(lo) || v > static_cast<double>(hi))
      bad(key, "is " + value + "; expected an integer from " + std::to_string(lo) + " to " + std::to_string(hi));
    return static_cast<long long>(v);
  }

  size_t count(Count c, const std::string& key) const {
    if (c == Count::One) return 1;
    if (c == Count::Four) return 4;
    if (!ndims_) bad(key, "comes before NDims; NDims must be given first");
    return c == Count::NDims ? ndims_ : ndims_ * ndims_;
  }

  void field(const std::string& key, const std::string& value) {
    if (key == "NDims") {
      ndims_ = static_cast<size_t>(integer(key, value, 2, 3));
    } else if (key == "DimSize") {
      const auto dims = numbers(key, value, count(Count::NDims, key));
      for (double d : dims)
        if (std::floor(d) != d || d < 1 || d > static_cast<double>(kMaxAxisLength))
          bad(key, "is '" + value + "'; expected positive integers of at most " + std::to_string(kMaxAxisLength));
    } else if (auto it = number_fields().find(key); it != number_fields().end()) {
      numbers(key, value, count(it->second, key));
    } else if (key == "ElementNumberOfChannels") {
      integer(key, value, 1, 4);
    } else if (key == "HeaderSize") {
      integer(key, value, -1, 0);
    } else if (kYesNoFields.count(key)) {
      // MetaIO takes anything starting with T, t or 1 as yes; only the words
      // themselves keep the length check of itk_bridge.cc reading it the same way.
      if (value != "True" && value != "False" && value != "true" && value != "false")
        bad(key, "is '" + value + "'; expected True or False");
    } else if (key == "ObjectType") {
      if (value != "Image") bad(key, "is '" + value + "'; expected Image");
    } else if (key == "ElementType") {
      if (!kElementTypes.count(value)) bad(key, "is '" + value + "'; expected a scalar type such as MET_FLOAT");
    } else if (key == "AnatomicalOrientation") {
      if (value.size() != count(Count::NDims, key) || value.find_first_not_of("RLAPSI?") != std::string::npos)
        bad(key, "is '" + value + "'; expected NDims letters from R, L, A, P, S, I or ?");
    } else if (key == "ElementDataFile") {
      if (value != "LOCAL" && value != "local")
        bad(key, "is '" + value + "'; a .mha file must hold its pixels itself (ElementDataFile = LOCAL)");
      if (!ndims_) bad("NDims", "is missing");
      done_ = true;
    }
    // Other keys (Comment, Name, Modality, the writer's own notes) are free text.
  }

  // One header line (without its end of line).
  void line(const std::string& text) {
    ++line_no_;
    if (text.size() > kMaxLineBytes) bad("", "has a line longer than " + std::to_string(kMaxLineBytes) + " bytes");
    if (text.find('\0') != std::string::npos) bad("", "holds a NUL byte before ElementDataFile");
    const auto eq = text.find('=');
    std::string key = text.substr(0, eq == std::string::npos ? text.size() : eq);
    trim(key);
    if (eq == std::string::npos) {
      if (key.empty()) return;  // blank line
      bad("", "line '" + text.substr(0, 60) + "' is not 'Key = value'");
    }
    if (key.empty() || key.find_first_not_of("ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789_") !=
                           std::string::npos)
      bad("", "line '" + text.substr(0, 60) + "' has no valid key (letters, digits, '_') before '='");
    if (!seen_.insert(key).second) bad(key, "is given twice");
    std::string value = text.substr(eq + 1);
    trim(value);
    field(key, value);
  }

  bool done() const { return done_; }

 private:
  static void trim(std::string& s) {
    const auto b = s.find_first_not_of(" \t\r");
    if (b == std::string::npos) {
      s.clear();
      return;
    }
    s = s.substr(b, s.find_last_not_of(" \t\r") - b + 1);
  }

  std::string path_;
  int line_no_ = 0;
  size_t ndims_ = 0;
  bool done_ = false;
  std::set<std::string> seen_;
};

}  // namespace

void check_metaimage_header(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path, "", "cannot be opened");
  MhaHeaderParser check(path);
  std::string text;
  for (size_t n = 0; n < kMaxLines && !check.done(); ++n) {
    text.clear();
    char c;
    while (in.get(c) && c != '\n' && text.size() <= kMaxLineBytes) text.push_back(c);
    if (!in && text.empty()) break;
    check.line(text);
    if (!in) break;
  }
  if (!check.done())
    throw InputError(path, "ElementDataFile",
                     "the MetaImage header has no 'ElementDataFile = LOCAL' line within its first " +
                         std::to_string(kMaxLines) + " lines");
}

}  // namespace recofold::internal
