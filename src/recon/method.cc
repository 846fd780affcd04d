// SPDX-License-Identifier: Apache-2.0
// Method names and where each method applies.
#include "recofold/recon/method.h"

namespace recofold {

std::string_view to_string(Method method) {
  switch (method) {
    case Method::kZeroFilled: return "zero-filled";
    case Method::kFbp: return "fbp";
    case Method::kCg: return "cg";
    case Method::kIsta: return "ista";
    case Method::kFista: return "fista";
    case Method::kAdmm: return "admm";
    case Method::kPdhg: return "pdhg";
    case Method::kUnrolled: return "unrolled";
  }
  return "fista";
}

const std::vector<Method>& all_methods() {
  static const std::vector<Method> all = {Method::kZeroFilled, Method::kFbp,  Method::kCg,   Method::kIsta,
                                          Method::kFista,      Method::kAdmm, Method::kPdhg, Method::kUnrolled};
  return all;
}

std::optional<Method> parse_method(std::string_view text) {
  for (Method m : all_methods())
    if (text == to_string(m)) return m;
  return std::nullopt;
}

std::string accepted_methods() {
  std::string s;
  for (Method m : all_methods()) s += (s.empty() ? "" : ", ") + std::string(to_string(m));
  return s;
}

bool is_iterative(Method method) {
  return method == Method::kCg || method == Method::kIsta || method == Method::kFista || method == Method::kAdmm ||
         method == Method::kPdhg;
}

bool runs_on(Method method, Modality modality) {
  switch (method) {
    case Method::kZeroFilled: return modality != Modality::kCt;
    case Method::kFbp: return modality == Modality::kCt;
    default: return true;
  }
}

}  // namespace recofold
