// SPDX-License-Identifier: Apache-2.0
// A LinearOperator backed by an explicit dense complex matrix (small problems and tests).
#pragma once

#include <Eigen/Core>

#include <string>

#include "recofold/ops/linear_operator.h"

namespace recofold {

// y = M x with an explicit matrix M (m x n, single precision complex). For
// tests and small problems: shapes default to {n} and {m}; other shapes may be
// given as long as their sizes match the matrix. Thread-safe.
class DenseOperator final : public LinearOperator {
 public:
  explicit DenseOperator(Eigen::MatrixXcf matrix);
  DenseOperator(Eigen::MatrixXcf matrix, Shape domain, Shape range);

  void apply(const VecC& x, VecC& y) const override;
  void adjoint(const VecC& y, VecC& x) const override;
  Shape domain_shape() const override { return domain_; }
  Shape range_shape() const override { return range_; }
  Index domain_size() const override { return domain_.size(); }
  Index range_size() const override { return range_.size(); }
  std::string name() const override;

  const Eigen::MatrixXcf& matrix() const { return m_; }

 private:
  Eigen::MatrixXcf m_;
  Shape domain_, range_;
};

}  // namespace recofold
