// SPDX-License-Identifier: Apache-2.0
// l1-wavelet prior: soft thresholding in an orthogonal wavelet basis, per-band weights, cycle spinning.
#include "recofold/priors/wavelet_l1.h"

#include <cmath>
#include <limits>
#include <sstream>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/core/field_error.h"
#include "recofold/priors/shrinkage.h"

namespace recofold {

std::vector<std::string> WaveletL1Options::validate(const Shape& image_shape) const {
  std::vector<std::string> errors;
  if (levels < 1 || levels > 30) {
    errors.push_back("wavelet.levels = " + std::to_string(levels) + "; must be in [1, 30]");
  } else if (image_shape.rank() == 2) {
    const Index m = Index(1) << levels;
    if (image_shape[0] % m != 0 || image_shape[1] % m != 0 || image_shape[0] < m || image_shape[1] < m)
      errors.push_back("wavelet.levels = " + std::to_string(levels) + "; image " + image_shape.to_string() +
                       " needs sides divisible by " + std::to_string(m));
  }
  if (image_shape.rank() != 2) errors.push_back("wavelet.shape = " + image_shape.to_string() + "; must be 2-D");
  if (!band_weights.empty()) {
    const size_t expected = 1 + 3 * static_cast<size_t>(std::max(levels, 0));
    if (band_weights.size() != expected)
      errors.push_back("wavelet.band_weights has " + std::to_string(band_weights.size()) + " entries; must have " +
                       std::to_string(expected) + " (1 + 3 * levels) or none");
    for (size_t b = 0; b < band_weights.size(); ++b)
      if (!(band_weights[b] >= 0.0) || !std::isfinite(band_weights[b])) {
        errors.push_back("wavelet.band_weights[" + std::to_string(b) + "] = " + std::to_string(band_weights[b]) +
                         "; must be finite and >= 0");
        break;
      }
  }
  return errors;
}

WaveletL1Prior::WaveletL1Prior(Shape image_shape, double weight, WaveletL1Options options)
    : Prior(weight), shape_(std::move(image_shape)), options_(std::move(options)) {
  throw_if_invalid(parse_field_messages(options_.validate(shape_)));
  if (!(weight >= 0.0) || !std::isfinite(weight))
    throw InputError("", "prior.lambda", "= " + std::to_string(weight) + "; must be finite and >= 0");
  transform_ = std::make_shared<WaveletTransform>(shape_, options_.family, options_.levels);
  const std::vector<int> band = transform_->band_index();
  coefficient_weights_.resize(band.size());
  for (size_t i = 0; i < band.size(); ++i) {
    const int b = band[i];
    double w = options_.band_weights.empty() ? 1.0 : options_.band_weights[static_cast<size_t>(b)];
    if (b == 0 && !options_.penalise_approximation) w = 0.0;
    coefficient_weights_[i] = static_cast<float>(w);
  }
}

WaveletL1Prior::WaveletL1Prior(const WaveletL1Prior& other)
    : Prior(other.weight_),
      shape_(other.shape_),
      options_(other.options_),
      transform_(other.transform_),
      coefficient_weights_(other.coefficient_weights_) {}

double WaveletL1Prior::value(const VecC& x) const {
  VecC c;
  transform_->apply(x, c);
  return analysis_value(c);
}

double WaveletL1Prior::analysis_value(const VecC& z) const {
  double s = 0.0;
  for (Index i = 0; i < z.size(); ++i) s += coefficient_weights_[static_cast<size_t>(i)] * double(std::abs(z[i]));
  return weight_ * s;
}

void WaveletL1Prior::analysis_prox(const VecC& w, double step, VecC& out) const {
  const double t = step * weight_;
  out.resize(w.size());
  for (Index i = 0; i < w.size(); ++i) out[i] = soft_threshold(w[i], t * coefficient_weights_[static_cast<size_t>(i)]);
}

double WaveletL1Prior::analysis_conjugate(const VecC& q) const {
  for (Index i = 0; i < q.size(); ++i) {
    const double bound = weight_ * coefficient_weights_[static_cast<size_t>(i)];
    if (std::abs(q[i]) > bound * (1.0 + 1e-4) + 1e-12) return std::numeric_limits<double>::infinity();
  }
  return 0.0;
}

void WaveletL1Prior::prox(const VecC& v, double step, VecC& out) const {
  VecC c;
  transform_->apply(v, c);
  analysis_prox(c, step, c);
  transform_->adjoint(c, out);
}

std::pair<Index, Index> WaveletL1Prior::cycle_shift(uint64_t call) const {
  if (!options_.cycle_spin || call == 0) return {0, 0};
  Rng rng = Rng::for_stream(options_.cycle_spin_seed, call);
  const uint64_t period = uint64_t(1) << options_.levels;
  const Index dy = static_cast<Index>(rng.below(period));
  const Index dx = static_cast<Index>(rng.below(period));
  return {dy, dx};
}

void WaveletL1Prior::prox_at(const VecC& v, double step, uint64_t call, VecC& out) const {
  const auto [dy, dx] = cycle_shift(call);
  if (dy == 0 && dx == 0) {
    prox(v, step, out);
    return;
  }
  VecC shifted, back, c;
  circular_shift(v, shape_, dy, dx, shifted);
  transform_->apply(shifted, c);
  analysis_prox(c, step, c);
  transform_->adjoint(c, back);
  circular_shift(back, shape_, -dy, -dx, out);
}

std::string WaveletL1Prior::name() const {
  std::ostringstream s;
  s << "wavelet " << to_string(options_.family) << " " << options_.levels << " levels"
    << (options_.cycle_spin ? " cycle-spin" : "") << " lambda " << weight_;
  return s.str();
}

}  // namespace recofold
